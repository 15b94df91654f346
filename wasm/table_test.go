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
// the grid only scouted (a normal), and the grid where it is the reference
// (a density with an undefined region next to its mass, the catalogue's
// gap case: the rule gives way to the grid's end corrections); and, for a
// result whose rule had the full grid evaluated beside it for a marginal
// its walks do not resolve (a chaotic cost's thin ridge, seconds of
// analysis: the normal's result is relabelled here), the rule with the
// grid's points.
func TestTableNamesTheReference(t *testing.T) {
	cases := []struct {
		name, src     string
		rule, scouted bool
		want          string
	}{
		{"normal", "param x\n-x^2/2", true, true, "exact: quadrature around the modes (scouting grid"},
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
		if c.name == "normal" {
			r.Grid.Scouted, r.Grid.Points = false, []int{1001}
			b.Reset()
			writeTable(&b, c.name, r)
			if want := "exact: quadrature around the modes, with a grid of 1001 points for the marginals its walks do not resolve"; !strings.Contains(b.String(), "\n"+want) {
				t.Errorf("the rule with a full grid: the table does not say %q:\n%s", want, b.String())
			}
		}
	}
}
