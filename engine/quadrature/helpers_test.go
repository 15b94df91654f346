package quadrature

import (
	"context"
	"math"
	"testing"

	"bellcheck/engine/eval"
	"bellcheck/engine/fit"
	"bellcheck/engine/model"
	"bellcheck/engine/target"
	"bellcheck/engine/transform"
)

// problem is a model compiled and put on the unconstrained scale (log for
// [lo, inf], logit for [lo, hi]), with its mode and curvature.
type problem struct {
	p     target.Density
	maps  []transform.Map
	start Start
}

func compile(t testing.TB, src string) problem {
	t.Helper()
	m, err := model.Parse(src)
	if err != nil {
		t.Fatalf("parse: %v", err)
	}
	ev, err := eval.Compile(m)
	if err != nil {
		t.Fatalf("compile: %v", err)
	}
	d := len(m.Params)
	maps := make([]transform.Map, d)
	for i, prm := range m.Params {
		mp := transform.Map{Scale: transform.Identity, Lo: prm.Lo, Hi: prm.Hi}
		switch {
		case !math.IsInf(prm.Lo, 0) && !math.IsInf(prm.Hi, 0):
			mp.Scale = transform.Logit
		case !math.IsInf(prm.Lo, 0):
			mp.Scale = transform.Log
		case !math.IsInf(prm.Hi, 0):
			t.Fatalf("parameter %s: an upper bound alone is not used in these tests", prm.Name)
		}
		maps[i] = mp
	}
	p, err := transform.Wrap(ev, maps)
	if err != nil {
		t.Fatal(err)
	}
	return problem{p: p, maps: maps, start: modeOf(t, p, make([]float64, d))}
}

// modeOf finds the mode from x0 with the project's Newton search and
// returns it with the negative Hessian.
func modeOf(t testing.TB, p target.Density, x0 []float64) Start {
	t.Helper()
	modes, err := fit.FindModes(context.Background(), p, [][]float64{x0}, nil, nil)
	if err != nil || len(modes) == 0 {
		t.Fatalf("mode search: %v (%d modes)", err, len(modes))
	}
	md := modes[0]
	d := p.Dim()
	nh := make([]float64, d*d)
	for i := 0; i < d; i++ {
		for j := 0; j < d; j++ {
			nh[i*d+j] = -md.Hess.At(i, j)
		}
	}
	return Start{Mode: md.X, NegHessian: nh}
}

func (pr problem) integrate(t testing.TB, s Settings) *Result {
	t.Helper()
	s.Maps = pr.maps
	res, err := Integrate(context.Background(), pr.p, pr.start, s)
	if err != nil {
		t.Fatalf("integrate: %v", err)
	}
	return res
}

// check compares a value with its reference, within tol, and (when est is
// given, >= 0) checks that the error estimate covers the actual error.
func check(t *testing.T, name string, got, want, tol, est float64) {
	t.Helper()
	err := math.Abs(got - want)
	if !(err <= tol) {
		t.Errorf("%s = %.12g, want %.12g (error %.2g > %.2g)", name, got, want, err, tol)
	}
	if est >= 0 && !(err <= est) && err > 1e-12*math.Max(1, math.Abs(want)) {
		t.Errorf("%s: error estimate %.2g does not cover the error %.2g", name, est, err)
	}
}
