package eval

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/diff/fd"
	"gonum.org/v1/gonum/mat"

	"bellcheck/engine/model"
)

// compileSrc parses and compiles a model or fails the test.
func compileSrc(t testing.TB, src string) *Evaluator {
	t.Helper()
	m, err := model.Parse(src)
	if err != nil {
		t.Fatalf("parse %q: %v", src, err)
	}
	ev, err := Compile(m)
	if err != nil {
		t.Fatalf("compile %q: %v", src, err)
	}
	return ev
}

// derivs returns the value, gradient and Hessian (as rows) at x.
func derivs(ev *Evaluator, x []float64) (float64, []float64, [][]float64) {
	d := ev.Dim()
	g := make([]float64, d)
	h := make([]float64, d*d)
	v := ev.LogDensityDerivs(x, g, h)
	rows := make([][]float64, d)
	for i := range rows {
		rows[i] = h[i*d : (i+1)*d]
	}
	return v, g, rows
}

// near reports whether got is within tol of want relative to max(scale, |want|).
func near(got, want, tol, scale float64) bool {
	if math.IsNaN(want) {
		return math.IsNaN(got)
	}
	if math.IsInf(want, 0) {
		return got == want
	}
	return math.Abs(got-want) <= tol*math.Max(scale, math.Abs(want))
}

// fdCheck compares the evaluator's gradient and Hessian at x with central
// finite differences of its own LogDensity (gonum's diff/fd), and the
// Hessian also with central differences of the exact gradient. tol is
// relative to the largest entry (at least 1).
func fdCheck(t *testing.T, label string, ev *Evaluator, x []float64, tol float64) {
	t.Helper()
	d := ev.Dim()
	v, g, h := derivs(ev, x)
	// (Equal for scalar models; sums over data add up in another order.)
	if pv := ev.LogDensity(x); !near(v, pv, 1e-13, 1) {
		t.Errorf("%s at %v: value with derivatives %v, alone %v", label, x, v, pv)
	}
	// Steps shrink with the smallest non-zero coordinate, so that points
	// near a support edge at 0 are not straddled.
	sc := 1.0
	for _, xi := range x {
		if xi != 0 {
			sc = math.Min(sc, math.Abs(xi))
		}
	}
	sc = math.Max(sc, 1e-3)
	f := func(y []float64) float64 { return ev.Clone().LogDensity(y) }
	fg := fd.Gradient(nil, f, x, &fd.Settings{Formula: fd.Central, Step: 1e-5 * sc})
	var fh mat.SymDense
	fd.Hessian(&fh, f, x, &fd.Settings{Formula: fd.Central, Step: 1e-4 * sc})
	scaleG, scaleH := 1.0, 1.0
	for i := 0; i < d; i++ {
		scaleG = math.Max(scaleG, math.Abs(g[i]))
		for j := 0; j < d; j++ {
			scaleH = math.Max(scaleH, math.Abs(h[i][j]))
		}
	}
	for i := 0; i < d; i++ {
		if !near(g[i], fg[i], tol, scaleG) {
			t.Errorf("%s at %v: gradient[%d] = %.12g, finite differences %.12g", label, x, i, g[i], fg[i])
		}
		for j := 0; j < d; j++ {
			if h[i][j] != h[j][i] {
				t.Errorf("%s at %v: Hessian not symmetric at %d,%d", label, x, i, j)
			}
			if !near(h[i][j], fh.At(i, j), 10*tol, scaleH) {
				t.Errorf("%s at %v: Hessian[%d][%d] = %.12g, finite differences %.12g", label, x, i, j, h[i][j], fh.At(i, j))
			}
		}
	}
	// Central differences of the exact gradient (truncation O(step^2)).
	step := 1e-5 * sc
	c := ev.Clone().(*Evaluator)
	for j := 0; j < d; j++ {
		xp := append([]float64(nil), x...)
		xm := append([]float64(nil), x...)
		xp[j] += step
		xm[j] -= step
		_, gp, _ := derivs(c, xp)
		_, gm, _ := derivs(c, xm)
		for i := 0; i < d; i++ {
			want := (gp[i] - gm[i]) / (2 * step)
			if !near(h[i][j], want, tol, scaleH) {
				t.Errorf("%s at %v: Hessian[%d][%d] = %.12g, differences of the gradient %.12g", label, x, i, j, h[i][j], want)
			}
		}
	}
}

// blockMatches checks that block evaluation at the given points equals
// point evaluation exactly.
func blockMatches(t *testing.T, label string, ev *Evaluator, pts [][]float64) {
	t.Helper()
	d := ev.Dim()
	cols := make([][]float64, d)
	for k := range cols {
		cols[k] = make([]float64, len(pts))
		for i, p := range pts {
			cols[k][i] = p[k]
		}
	}
	out := make([]float64, len(pts))
	ev.LogDensityBlock(cols, out)
	for i, p := range pts {
		want := ev.LogDensity(p)
		if !(out[i] == want || (math.IsNaN(out[i]) && math.IsNaN(want))) {
			t.Errorf("%s: block value at %v = %v, point value %v", label, p, out[i], want)
			return
		}
	}
}
