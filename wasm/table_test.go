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
	if len(meanRow) != 5 {
		t.Fatalf("mean row %v, want the exact column and four fits:\n%s", meanRow, b.String())
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
