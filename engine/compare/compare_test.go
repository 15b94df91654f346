package compare

import (
	"context"
	"errors"
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"

	"bellcheck/engine/gauss"
	"bellcheck/engine/grid"
	"bellcheck/engine/internal/targettest"
)

// newGauss returns a normal log-density times exp(logScale).
func newGauss(mean []float64, cov *mat.SymDense, logScale float64) *targettest.Func {
	var chol mat.Cholesky
	if !chol.Factorize(cov) {
		panic("not positive definite")
	}
	logNorm := -0.5*float64(len(mean))*math.Log(2*math.Pi) - 0.5*chol.LogDet() + logScale
	return &targettest.Func{D: len(mean), LogP: func(x []float64) float64 {
		r := mat.NewVecDense(len(x), nil)
		for i := range x {
			r.SetVec(i, x[i]-mean[i])
		}
		var s mat.VecDense
		_ = chol.SolveVecTo(&s, r)
		return logNorm - 0.5*mat.Dot(r, &s)
	}}
}

// klGauss is the closed-form KL(a||b) between normals (e.g. Kullback 1959;
// standard result): 1/2 [tr(Sb^-1 Sa) + (mb-ma)' Sb^-1 (mb-ma) - d + ln det Sb/det Sa].
func klGauss(ma []float64, sa *mat.SymDense, mb []float64, sb *mat.SymDense) float64 {
	d := len(ma)
	var cb, ca mat.Cholesky
	cb.Factorize(sb)
	ca.Factorize(sa)
	var inv mat.SymDense
	_ = cb.InverseTo(&inv)
	var prod mat.Dense
	prod.Mul(&inv, sa)
	diff := mat.NewVecDense(d, nil)
	for i := range ma {
		diff.SetVec(i, mb[i]-ma[i])
	}
	return 0.5 * (mat.Trace(&prod) + mat.Inner(diff, &inv, diff) - float64(d) + cb.LogDet() - ca.LogDet())
}

// hellingerGauss is the closed-form Hellinger distance between normals:
// H^2 = 1 - det(Sa)^1/4 det(Sb)^1/4 / det(S)^1/2 exp(-1/8 dm' S^-1 dm), S = (Sa+Sb)/2.
func hellingerGauss(ma []float64, sa *mat.SymDense, mb []float64, sb *mat.SymDense) float64 {
	d := len(ma)
	var s mat.SymDense
	s.AddSym(sa, sb)
	s.ScaleSym(0.5, &s)
	var cs, ca, cb mat.Cholesky
	cs.Factorize(&s)
	ca.Factorize(sa)
	cb.Factorize(sb)
	var inv mat.SymDense
	_ = cs.InverseTo(&inv)
	diff := mat.NewVecDense(d, nil)
	for i := range ma {
		diff.SetVec(i, mb[i]-ma[i])
	}
	bc := math.Exp(0.25*ca.LogDet()+0.25*cb.LogDet()-0.5*cs.LogDet()) * math.Exp(-mat.Inner(diff, &inv, diff)/8)
	return math.Sqrt(1 - bc)
}

func TestAgainstClosedForms(t *testing.T) {
	pm := []float64{1, -1}
	pc := mat.NewSymDense(2, []float64{1, 0.6, 0.6, 2})
	p := newGauss(pm, pc, 2.5)
	g, err := grid.Evaluate(context.Background(), p, grid.Box{Lo: []float64{-7, -11}, Hi: []float64{9, 9}}, grid.Settings{})
	if err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name   string
		mean   []float64
		cov    *mat.SymDense
		method Method
		tol    float64
	}{
		{"same", pm, pc, OnGrid, 1e-9},
		{"shifted and narrower", []float64{1.5, -0.5}, mat.NewSymDense(2, []float64{0.5, 0.1, 0.1, 1}), OnGrid, 1e-8},
		{"uncorrelated", []float64{0.8, -1.2}, mat.NewSymDense(2, []float64{1, 0, 0, 2}), OnGrid, 1e-8},
		// Wider than the box: the cubature takes over for KL(q||p).
		{"wide", []float64{1, -1}, mat.NewSymDense(2, []float64{9, 0, 0, 16}), Cubature, 1e-7},
	}
	for _, c := range cases {
		res, err := Compare(g, prepared(t, gauss.Gaussian{Mean: c.mean, Cov: c.cov}), Settings{Density: p})
		if err != nil {
			t.Fatal(err)
		}
		r := res[0]
		if r.Method != c.method {
			t.Errorf("%s: method %s, want %s (q mass %g)", c.name, r.Method, c.method, r.QMass)
		}
		if want := klGauss(c.mean, c.cov, pm, pc); math.Abs(r.KLqp-want) > c.tol {
			t.Errorf("%s: KL(q||p) %.12g, closed form %.12g", c.name, r.KLqp, want)
		}
		if want := klGauss(pm, pc, c.mean, c.cov); math.Abs(r.KLpq-want) > c.tol {
			t.Errorf("%s: KL(p||q) %.12g, closed form %.12g", c.name, r.KLpq, want)
		}
		// The squared distance is what the quadrature gives.
		if want := hellingerGauss(pm, pc, c.mean, c.cov); math.Abs(r.Hellinger*r.Hellinger-want*want) > c.tol {
			t.Errorf("%s: Hellinger %.12g, closed form %.12g", c.name, r.Hellinger, want)
		}
	}
}

// With the same mean and covariance c times the exact one, the exact mass in
// q's 95 % region is P(chi-square_d <= q95 / c) (closed form; gonum's distuv
// for the chi-square).
func TestCoverage(t *testing.T) {
	for _, d := range []int{1, 2, 3, 4} {
		mean := make([]float64, d)
		cov := mat.NewSymDense(d, nil)
		for i := 0; i < d; i++ {
			mean[i] = float64(i)
			cov.SetSym(i, i, 1+float64(i))
			if i > 0 {
				cov.SetSym(i, i-1, 0.3)
			}
		}
		p := newGauss(mean, cov, 0)
		box := grid.Box{}
		for i := 0; i < d; i++ {
			s := math.Sqrt(cov.At(i, i))
			box.Lo = append(box.Lo, mean[i]-7*s)
			box.Hi = append(box.Hi, mean[i]+7*s)
		}
		g, err := grid.Evaluate(context.Background(), p, box, grid.Settings{})
		if err != nil {
			t.Fatal(err)
		}
		chi := distuv.ChiSquared{K: float64(d)}
		q95 := chi.Quantile(0.95)
		for _, c := range []float64{1, 0.5, 2} {
			var qc mat.SymDense
			qc.ScaleSym(c, cov)
			res, err := Compare(g, prepared(t, gauss.Gaussian{Mean: mean, Cov: &qc}), Settings{Density: p})
			if err != nil {
				t.Fatal(err)
			}
			want := chi.CDF(q95 * c)
			// Second order in the spacing (41 points over 14 sd in 4-D is coarse).
			tol := map[int]float64{1: 1e-6, 2: 1e-4, 3: 2e-4, 4: 3e-4}[d]
			if got := res[0].Coverage95; math.Abs(got-want) > tol {
				t.Errorf("d=%d c=%g: coverage %.6f, want %.6f", d, c, got, want)
			}
		}
	}
}

func TestInfiniteKL(t *testing.T) {
	// p is zero for x < 0 inside the box: every Gaussian has KL(q||p) = +Inf.
	p := halfNormal()
	g, err := grid.Evaluate(context.Background(), p, grid.Box{Lo: []float64{-1}, Hi: []float64{8}}, grid.Settings{})
	if err != nil {
		t.Fatal(err)
	}
	q := prepared(t, gauss.Gaussian{Mean: []float64{0.8}, Cov: mat.NewSymDense(1, []float64{0.36})})
	res, err := Compare(g, q, Settings{})
	if err != nil {
		t.Fatal(err)
	}
	if !math.IsInf(res[0].KLqp, 1) || math.IsInf(res[0].KLpq, 0) || !(res[0].Hellinger > 0 && res[0].Hellinger < 1) {
		t.Errorf("KL(q||p) %g, KL(p||q) %g, Hellinger %g", res[0].KLqp, res[0].KLpq, res[0].Hellinger)
	}
	res, _ = Compare(g, q, Settings{Bounded: true})
	if !math.IsInf(res[0].KLqp, 1) || res[0].Method != BoundedSupport {
		t.Errorf("bounded: %+v", res[0])
	}
	two := prepared(t, gauss.Gaussian{Mean: []float64{0, 0}, Cov: mat.NewSymDense(2, []float64{1, 0, 0, 1})})
	if _, err := Compare(g, two, Settings{}); !errors.Is(err, ErrBadGaussian) {
		t.Errorf("a 2-D Gaussian on a 1-D grid: err = %v, want ErrBadGaussian", err)
	}
}

// halfNormal is the standard normal log-density on [0, inf].
func halfNormal() *targettest.Func {
	return &targettest.Func{D: 1, LogP: func(x []float64) float64 {
		if x[0] < 0 {
			return math.Inf(-1)
		}
		return -x[0] * x[0] / 2
	}}
}

// bananaDensity is a curved two-dimensional log-density.
func bananaDensity() *targettest.Func {
	return &targettest.Func{D: 2, LogP: func(x []float64) float64 {
		u := x[1] + 0.05*x[0]*x[0] - 5
		return -x[0]*x[0]/200 - u*u/2
	}}
}

// prepared prepares the Gaussians for Compare.
func prepared(tb testing.TB, gs ...gauss.Gaussian) []*gauss.Prepared {
	tb.Helper()
	out := make([]*gauss.Prepared, len(gs))
	for i, g := range gs {
		p, err := gauss.Prepare(g)
		if err != nil {
			tb.Fatal(err)
		}
		out[i] = p
	}
	return out
}
