package examples

import (
	"context"
	"testing"

	"bellcheck/engine"
	"bellcheck/engine/model"
)

// TestEveryExampleAnalyses runs the real engine on each gallery scenario
// with its suggested options, so a gallery entry cannot silently break.
func TestEveryExampleAnalyses(t *testing.T) {
	for _, e := range All {
		m, err := model.Parse(e.Source)
		if err != nil {
			t.Fatalf("%s: %v", e.ID, err)
		}
		if testing.Short() && len(m.Params) > 3 {
			continue
		}
		opts := engine.Options{Plots: true}
		for _, p := range m.Params {
			opts.Params = append(opts.Params, e.Params[p.Name])
		}
		r, err := engine.Analyse(context.Background(), m, opts, nil)
		if err != nil {
			t.Errorf("%s: %v", e.ID, err)
			continue
		}
		d := len(m.Params)
		if r.Plots == nil || len(r.Plots.Marginals) != d || len(r.Plots.Pairs) != d*(d-1)/2 {
			t.Errorf("%s: plots missing", e.ID)
		}
		for name, o := range e.Params {
			found := false
			for i, p := range m.Params {
				if p.Name == name {
					found = true
					if o.Scale != "" && r.Scales[i] != o.Scale {
						t.Errorf("%s: %s fitted on %s, suggested %s", e.ID, name, r.Scales[i], o.Scale)
					}
				}
			}
			if !found {
				t.Errorf("%s: suggested options for unknown parameter %q", e.ID, name)
			}
		}
	}
}
