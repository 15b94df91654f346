package engine

import (
	"context"
	"encoding/json"
	"fmt"
	"path/filepath"
	"testing"
)

// The exact result handed over before the fits (handOverExact, with its
// time threshold at zero): it holds the whole result's exact numbers,
// modes and marginal plots, no fits, and says that the fits and pairs
// follow; and the whole result is the same, timing aside, as an analysis
// that hands over nothing. Models of one, two and three parameters from
// testdata/reference/bench, with the nested rule and with the grid as the
// reference.
func TestExactBeforeFits(t *testing.T) {
	old := exactEarlyAfter
	exactEarlyAfter = 0
	defer func() { exactEarlyAfter = old }()
	oldRule := useQuadrature
	defer func() { useQuadrature = oldRule }()
	for _, c := range []struct {
		name string
		rule bool
	}{{"decay_rate_1d.txt", true}, {"banana_2d.txt", true}, {"sensor_3d.txt", true}, {"banana_2d.txt", false}, {"sensor_3d.txt", false}} {
		name := c.name
		useQuadrature = c.rule
		t.Run(fmt.Sprintf("%s/rule=%v", name, c.rule), func(t *testing.T) {
			m := parseFile(t, filepath.Join("..", "testdata", "reference", "bench", name))
			opts := Options{Plots: true}
			var early []*Result
			whole, err := AnalyseEarly(context.Background(), m, opts, nil, func(r *Result) { early = append(early, r) })
			if err != nil {
				t.Fatal(err)
			}
			plain, err := Analyse(context.Background(), m, opts, nil)
			if err != nil {
				t.Fatal(err)
			}
			if a, b := withoutTiming(t, whole), withoutTiming(t, plain); a != b {
				t.Errorf("the whole result differs from an analysis that hands over nothing")
			}
			if len(early) == 0 || !early[0].FitsToCome {
				t.Fatalf("no exact result before the fits (%d early results)", len(early))
			}
			first := early[0]
			for meth, f := range first.Fits {
				if f != nil {
					t.Errorf("fit %d present before the fits", meth)
				}
			}
			if got, want := mustJSON(t, first.Exact), mustJSON(t, whole.Exact); got != want {
				t.Errorf("exact results differ:\nearly %s\nwhole %s", got, want)
			}
			if got, want := mustJSON(t, first.Modes), mustJSON(t, whole.Modes); got != want {
				t.Errorf("modes differ:\nearly %s\nwhole %s", got, want)
			}
			d := len(whole.Params)
			// From the rule the pairs follow; from the grid they come at once.
			wantPairs := 0
			if !c.rule {
				wantPairs = d * (d - 1) / 2
			}
			if first.Plots == nil || len(first.Plots.Marginals) != d || len(first.Plots.Pairs) != wantPairs || first.Plots.PairsToCome != (c.rule && d > 1) {
				t.Fatalf("early plots: %d marginals, %d pairs, pairs to come %v", len(first.Plots.Marginals), len(first.Plots.Pairs), first.Plots.PairsToCome)
			}
			for i, p := range first.Plots.Pairs {
				w := whole.Plots.Pairs[i]
				if mustJSON(t, p.Density) != mustJSON(t, w.Density) || p.Levels != w.Levels {
					t.Errorf("pair %d differs from the whole result's", i)
				}
			}
			for k, mg := range first.Plots.Marginals {
				w := whole.Plots.Marginals[k]
				if mustJSON(t, mg.X) != mustJSON(t, w.X) || mustJSON(t, mg.Exact) != mustJSON(t, w.Exact) {
					t.Errorf("marginal %d differs from the whole result's", k)
				}
			}
			if whole.FitsToCome || (whole.Plots != nil && whole.Plots.PairsToCome) {
				t.Errorf("the whole result says more is to come")
			}
		})
	}
}

func mustJSON(t *testing.T, v any) string {
	t.Helper()
	b, err := json.Marshal(v)
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

func withoutTiming(t *testing.T, r *Result) string {
	t.Helper()
	c := *r
	c.Timing = Timing{}
	return mustJSON(t, c)
}
