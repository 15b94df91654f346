package examples

import (
	"strings"
	"testing"

	"bellcheck/engine/model"
)

func TestEveryExampleParses(t *testing.T) {
	if len(All) < 6 {
		t.Fatalf("the gallery has %d examples; the page promises at least 6", len(All))
	}
	wantParams := map[string][]string{
		"dose":         {"a", "b"},
		"square":       {"x"},
		"decay":        {"rate"},
		"banana":       {"u", "v"},
		"sensor":       {"offset", "gain", "noise"},
		"outlier":      {"loc", "scale"},
		"funnel":       {"logsd", "theta"},
		"clock":        {"offset", "rate", "ageing", "noise"},
		"oscillator":   {"w", "zeta"},
		"lorenz-short": {"x0", "y0", "z0"},
		"lorenz-long":  {"x0", "y0", "z0"},
		"separation":   {"a", "b"},
	}
	seen := map[string]bool{}
	for _, e := range All {
		if seen[e.ID] {
			t.Errorf("duplicate id %q", e.ID)
		}
		seen[e.ID] = true
		if e.Title == "" || e.Shows == "" || strings.Contains(e.Shows, "\n") {
			t.Errorf("%s: needs a title and a one-line description", e.ID)
		}
		m, err := model.Parse(e.Source)
		if err != nil {
			t.Errorf("%s does not parse:\n%v", e.ID, err)
			continue
		}
		var names []string
		for _, p := range m.Params {
			names = append(names, p.Name)
		}
		if want := wantParams[e.ID]; strings.Join(names, ",") != strings.Join(want, ",") {
			t.Errorf("%s: parameters %v, want %v", e.ID, names, want)
		}
	}
	if _, ok := ByID(Default); !ok {
		t.Errorf("default example %q missing", Default)
	}
}
