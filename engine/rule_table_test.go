package engine

import (
	"context"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"bellcheck/engine/model"
)

// TestRuleTable prints, for the cases of testdata/reference, the
// points and the log Z error of the grid and of the nested rule (the
// analysis run with the switch off, then on), and checks the nested rule's
// log Z against each case's expectation (the closed forms in the .expect
// files). It runs only with BELLCHECK_TABLE=1 (it takes a while):
//
//	BELLCHECK_TABLE=1 go test -run TestRuleTable -v ./engine/
func TestRuleTable(t *testing.T) {
	if os.Getenv("BELLCHECK_TABLE") != "1" {
		t.Skip("set BELLCHECK_TABLE=1 to print the table")
	}
	old := useQuadrature
	defer func() { useQuadrature = old }()
	t.Log("| case | grid points | grid log Z error | rule points | rule log Z error (estimate) |")
	for _, c := range loadReferencesIn(t, refDir) {
		var want float64
		found := false
		for _, l := range c.lines {
			if l.path == "exact.log_z" && l.kind == "value" {
				want, found = l.value, true
			}
		}
		if !found {
			continue
		}
		m, err := model.Parse(c.src)
		if err != nil {
			t.Fatal(err)
		}
		useQuadrature = false
		g, err := Analyse(context.Background(), m, c.opts, nil)
		if err != nil {
			t.Fatal(err)
		}
		gp := 1
		for _, p := range g.Grid.Points {
			gp *= p
		}
		useQuadrature = true
		a := &analysis{ctx: context.Background(), m: m, opts: c.opts, tr: newTracker(nil)}
		res, err := a.run()
		if err != nil {
			t.Fatal(err)
		}
		if a.ref.quad == nil {
			// The grid gives the reference (a mode of zero curvature gives
			// the rule no start): its row says so, and its error is held
			// to the same bound.
			t.Logf("| %s | %d | %.2g | grid | |", strings.TrimSuffix(filepath.Base(c.name), ".expect"), gp, math.Abs(g.Exact.LogZ-want))
			if errGrid := math.Abs(res.Exact.LogZ - want); !(errGrid <= 1e-6) {
				t.Errorf("%s: the grid's log Z off by %.2g", c.name, errGrid)
			}
			continue
		}
		q := a.ref.quad
		errNew := math.Abs(res.Exact.LogZ - want)
		t.Logf("| %s | %d | %.2g | %d | %.2g (%.2g) |", strings.TrimSuffix(filepath.Base(c.name), ".expect"),
			gp, math.Abs(g.Exact.LogZ-want), q.Points, errNew, q.LogZErr)
		if !(errNew <= 1e-6) {
			t.Errorf("%s: log Z off by %.2g", c.name, errNew)
		}
	}
}
