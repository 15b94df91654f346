//go:build !(js && wasm)

package main

import (
	"bytes"
	"context"
	"math"
	"strings"
	"testing"

	"bellcheck/engine"
	"bellcheck/engine/model"
)

// The table prints each fit's mean and sd on the original scale, beside the
// exact ones, also for a parameter fitted on the log scale: for Gamma(3, 2)
// the exact mean is a/b = 1.5 and the sd sqrt(a)/b = 0.866 (closed forms),
// and every fit's mean must be near 1.5, not near E log x = 0.23.
func TestTableFitsOnTheOriginalScale(t *testing.T) {
	m, err := model.Parse("param x in [0, inf]\nld_gamma(x, 3, 2)")
	if err != nil {
		t.Fatal(err)
	}
	r, err := engine.Analyse(context.Background(), m, engine.Options{Params: []engine.ParamOptions{{Scale: engine.Log}}}, nil)
	if err != nil {
		t.Fatal(err)
	}
	var b bytes.Buffer
	writeTable(&b, "gamma", r)
	var meanRow []string
	for _, line := range strings.Split(b.String(), "\n") {
		if f := strings.Fields(line); len(f) > 2 && f[0] == "mean" && f[1] == "x" {
			meanRow = f[2:]
		}
	}
	if len(meanRow) != 1+engine.NumMethods {
		t.Fatalf("mean row %v, want the exact column and %d fits:\n%s", meanRow, engine.NumMethods, b.String())
	}
	if got := meanRow[0]; got != num(r.Exact.Mean[0]) || math.Abs(r.Exact.Mean[0]-1.5) > 1e-6 {
		t.Errorf("exact mean printed %s, JSON %g, want 1.5", got, r.Exact.Mean[0])
	}
	for i, m := range engine.Methods {
		f := r.Fits[m]
		if f == nil {
			continue
		}
		if meanRow[i+1] != num(f.Mean[0]) {
			t.Errorf("fit %d: printed %s, the Result's mean %g", i, meanRow[i+1], f.Mean[0])
		}
		if math.Abs(f.Mean[0]-1.5) > 0.866 {
			t.Errorf("fit %d: mean %g is not on the original scale (exact 1.5, sd 0.866)", i, f.Mean[0])
		}
	}
}

// The table's first line names the exact reference: the nested rule where
// the grid only scouted (a normal), the rule with a full grid beside it for
// a marginal its walks do not resolve (the 3-D funnel's x1 and x2, whose
// marginals are far more peaked than their spread), and the grid where it
// is the reference (a
// density with an undefined region next to its mass, the catalogue's
// gap case: the rule gives way to the grid's end corrections).
func TestTableNamesTheReference(t *testing.T) {
	cases := []struct {
		name, src     string
		rule, scouted bool
		want          string
	}{
		{"normal", "param x\n-x^2/2", true, true, "exact: quadrature around the modes (scouting grid"},
		{"funnel", "param v\nparam x1\nparam x2\nld_normal(v, 0, 3) + ld_normal(x1, 0, exp(v/2)) + ld_normal(x2, 0, exp(v/2))", true, false, "exact: quadrature around the modes, with a grid of 81 x 81 x 81 points for the marginals its walks do not resolve"},
		{"edge", "param x\nparam y\n-x^2/2 - y^2/2 + log(x + y + 1.5)", false, false, "exact: grid of"},
	}
	for _, c := range cases {
		m, err := model.Parse(c.src)
		if err != nil {
			t.Fatal(err)
		}
		r, err := engine.Analyse(context.Background(), m, engine.Options{}, nil)
		if err != nil {
			t.Fatal(err)
		}
		if r.Exact.Rule != c.rule || r.Grid.Scouted != c.scouted {
			t.Errorf("%s: rule %v, scouted %v; want %v, %v", c.name, r.Exact.Rule, r.Grid.Scouted, c.rule, c.scouted)
		}
		var b bytes.Buffer
		writeTable(&b, c.name, r)
		if !strings.Contains(b.String(), "\n"+c.want) {
			t.Errorf("%s: the table does not say %q:\n%s", c.name, c.want, b.String())
		}
	}
}
