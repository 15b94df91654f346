package engine

import (
	"context"
	"encoding/json"
	"os"
	"path/filepath"
	"reflect"
	"testing"
	"time"

	"bellcheck/engine/model"
)

// withoutPlotsAndTiming is the JSON of r with its plots, diagnostics and
// timing left out: the numbers the early result and the whole one share.
func withoutPlotsAndTiming(t *testing.T, r *Result) string {
	t.Helper()
	c := *r
	c.Plots, c.Diagnostics, c.Timing = nil, nil, Timing{}
	b, err := json.Marshal(c)
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

// noExactEarly turns the exact result before the fits off for the test
// (handOverExact: on a slow machine an analysis may pass its threshold).
func noExactEarly(t *testing.T) {
	old := exactEarlyAfter
	exactEarlyAfter = time.Hour
	t.Cleanup(func() { exactEarlyAfter = old })
}

func parseFile(t *testing.T, path string) *model.Model {
	t.Helper()
	src, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	m, err := model.Parse(string(src))
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// The early result of a 3-D analysis is the whole result but for the pairs:
// the same numbers and marginals, no pairs, PairsToCome set; the whole
// result is Analyse's, pairs included (identities of the split, no outside
// values needed).
func TestAnalyseEarlyHandsOverAllButThePairs(t *testing.T) {
	noExactEarly(t)
	m := parseFile(t, filepath.Join("..", "testdata", "reference", "gauss3d.txt"))
	opts := Options{Plots: true}
	var early []*Result
	res, err := AnalyseEarly(context.Background(), m, opts, nil, func(r *Result) { early = append(early, r) })
	if err != nil {
		t.Fatal(err)
	}
	if len(early) != 1 {
		t.Fatalf("early called %d times, want once", len(early))
	}
	first := early[0]
	if first.Plots == nil || !first.Plots.PairsToCome || len(first.Plots.Pairs) != 0 {
		t.Fatalf("early plots: %+v, want marginals only with PairsToCome", first.Plots)
	}
	if res.Plots == nil || res.Plots.PairsToCome || len(res.Plots.Pairs) != 3 {
		t.Fatalf("whole result's plots: PairsToCome %v, %d pairs; want false, 3", res.Plots != nil && res.Plots.PairsToCome, len(res.Plots.Pairs))
	}
	if a, b := withoutPlotsAndTiming(t, first), withoutPlotsAndTiming(t, res); a != b {
		t.Errorf("the early result's numbers differ from the whole result's:\n%s\n%s", a, b)
	}
	ma, _ := json.Marshal(first.Plots.Marginals)
	mb, _ := json.Marshal(res.Plots.Marginals)
	if string(ma) != string(mb) {
		t.Error("the early result's marginals differ from the whole result's")
	}
	if !(first.Timing.Total > 0 && first.Timing.Total <= res.Timing.Total) {
		t.Errorf("early timing %v ms, whole %v ms", first.Timing.Total, res.Timing.Total)
	}
	if len(first.Diagnostics) > len(res.Diagnostics) {
		t.Errorf("early result has %d diagnostics, the whole one %d", len(first.Diagnostics), len(res.Diagnostics))
	}

	plain, err := Analyse(context.Background(), m, opts, nil)
	if err != nil {
		t.Fatal(err)
	}
	if a, b := withoutPlotsAndTiming(t, plain), withoutPlotsAndTiming(t, res); a != b {
		t.Error("AnalyseEarly's whole result differs from Analyse's")
	}
	pa, _ := json.Marshal(plain.Plots)
	pb, _ := json.Marshal(res.Plots)
	if string(pa) != string(pb) {
		t.Error("AnalyseEarly's plots differ from Analyse's")
	}
	if !reflect.DeepEqual(plain.Diagnostics, res.Diagnostics) {
		t.Errorf("diagnostics differ: %v against %v", plain.Diagnostics, res.Diagnostics)
	}
}

// In 2-D the pair is the density itself, cheap: there is no early result,
// nor without plots.
func TestAnalyseEarlyNotCalledWhereThePairsCostNothing(t *testing.T) {
	noExactEarly(t)
	for _, c := range []struct {
		file  string
		plots bool
	}{{"gauss2d.txt", true}, {"gauss3d.txt", false}} {
		m := parseFile(t, filepath.Join("..", "testdata", "reference", c.file))
		called := false
		if _, err := AnalyseEarly(context.Background(), m, Options{Plots: c.plots}, nil, func(*Result) { called = true }); err != nil {
			t.Fatal(err)
		}
		if called {
			t.Errorf("%s (plots %v): early called", c.file, c.plots)
		}
	}
}
