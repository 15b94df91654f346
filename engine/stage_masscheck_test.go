package engine

import (
	"context"
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"bellcheck/engine/fit"
	"bellcheck/engine/internal/targettest"
)

// besselI0 is the modified Bessel function I0(a) by its power series,
// sum (a/2)^(2k) / (k!)^2 (Abramowitz and Stegun 9.6.10).
func besselI0(a float64) float64 {
	term, sum := 1.0, 1.0
	for k := 1; k < 60; k++ {
		term *= (a / 2) * (a / 2) / float64(k*k)
		sum += term
	}
	return sum
}

// combDensity is a standard normal in 2-D times exp(A cos(2 pi y / P)):
// a comb of thin ridges along x. For P far below 1 its integral is
// 2 pi I0(A) (the normal averages the periodic factor, whose mean over a
// period is I0(A): Abramowitz and Stegun 9.6.19), up to a relative
// 2 I1(A)/I0(A) exp(-2 pi^2 / P^2), nothing at P = 0.05. A grid whose
// nodes sit at the comb's zero crossings (spacing P/2) sees the normal
// alone: log Z = log 2 pi, short by log I0(A), at every resolution.
func combDensity(a, period float64) *targettest.Func {
	return &targettest.Func{D: 2, LogP: func(x []float64) float64 {
		return -(x[0]*x[0]+x[1]*x[1])/2 + a*math.Cos(2*math.Pi*x[1]/period)
	}}
}

// TestMassCheck checks the importance-sampling test of a grid's log Z
// (checkMass, checkMassFitted): on the comb, whose integral is known in closed form, a log
// Z short by log I0(3) = 1.59 (what a grid aliased with the comb finds)
// is caught, with the exact results left out; the true log Z, and one
// short by 0.5 (within the test's factor of 3), are not. A reverse-KL fit
// that did not converge leaves the check out.
func TestMassCheck(t *testing.T) {
	const amp, period = 3.0, 0.05
	truth := math.Log(2*math.Pi) + math.Log(besselI0(amp))
	broad := &fit.VariationalFit{Gaussian: fit.Gaussian{Mean: []float64{0, 0}, Cov: mat.NewSymDense(2, []float64{1, 0, 0, 1})}, Converged: true}
	cases := []struct {
		name  string
		logZ  float64
		rev   *fit.VariationalFit
		fires bool
	}{
		{"a grid aliased with the comb", math.Log(2 * math.Pi), broad, true},
		{"the true log Z", truth, broad, false},
		{"log Z short by 0.5", truth - 0.5, broad, false},
		{"no converged fit", math.Log(2 * math.Pi), &fit.VariationalFit{Gaussian: broad.Gaussian}, false},
	}
	for _, c := range cases {
		a := &analysis{ctx: context.Background(), tr: newTracker(nil)}
		a.d, a.p = 2, combDensity(amp, period)
		a.ref = &reference{logZ: c.logZ, logZErr: 1e-12}
		a.checkMassFitted(c.rev)
		fired := !a.avail.resolved()
		if fired != c.fires {
			t.Errorf("%s: the check fired %v, want %v (diagnostics %v)", c.name, fired, c.fires, a.diag.list)
			continue
		}
		if !fired {
			continue
		}
		if len(a.diag.list) != 1 || a.diag.list[0].Code != CodeUnresolved || !strings.Contains(a.diag.list[0].Message, "missed part of the mass") {
			t.Errorf("%s: diagnostics %v", c.name, a.diag.list)
		}
		if a.avail.present(QuantityLogZ) || a.avail.present(QuantityMean) {
			t.Errorf("%s: log Z or the means are still reported", c.name)
		}
	}
}

// TestMassBatchesEstimateLogZ checks the batches' estimates themselves
// against closed forms: each is within 0.15 of log Z on the comb (whose
// weights vary by e^(+-3)) and within 0.06 on a correlated Gaussian with
// an unnormalised constant (a few standard errors of a batch of 4,000
// draws), from a proposal around the right place; none
// is above log Z + log 3 on the Gaussian.
func TestMassBatchesEstimateLogZ(t *testing.T) {
	const amp, period = 3.0, 0.05
	comb := combDensity(amp, period)
	combZ := math.Log(2*math.Pi) + math.Log(besselI0(amp))
	// A 3-D normal with covariance S and log p = -x' S^-1 x / 2 + 4: log Z
	// = 4 + log((2 pi)^(3/2) sqrt(det S)).
	s := mat.NewSymDense(3, []float64{2, 0.9, 0.3, 0.9, 1, 0.2, 0.3, 0.2, 0.5})
	var ch mat.Cholesky
	if !ch.Factorize(s) {
		t.Fatal("S is not positive definite")
	}
	var prec mat.SymDense
	if err := ch.InverseTo(&prec); err != nil {
		t.Fatal(err)
	}
	gauss := &targettest.Func{D: 3, LogP: func(x []float64) float64 {
		v := mat.NewVecDense(3, x)
		return -mat.Inner(v, &prec, v)/2 + 4
	}}
	gaussZ := 4 + 1.5*math.Log(2*math.Pi) + ch.LogDet()/2
	cases := []struct {
		name string
		p    *targettest.Func
		mean []float64
		cov  *mat.SymDense
		logZ float64
		tol  float64
	}{
		{"comb", comb, []float64{0, 0}, mat.NewSymDense(2, []float64{1, 0, 0, 1}), combZ, 0.15},
		{"correlated normal", gauss, []float64{0.1, -0.1, 0}, s, gaussZ, 0.06},
	}
	for _, c := range cases {
		got, ok := massBatches(context.Background(), c.p, c.mean, c.cov, nil, math.Inf(-1))
		if !ok || len(got) != massBatchCount {
			t.Fatalf("%s: %d batches, ok %v", c.name, len(got), ok)
		}
		t.Logf("%s: log Z %.4f, batches %.4f", c.name, c.logZ, got)
		for b, lz := range got {
			if math.Abs(lz-c.logZ) > c.tol {
				t.Errorf("%s: batch %d: log Z %.4f, want %.4f within %g", c.name, b, lz, c.logZ, c.tol)
			}
			if c.name == "correlated normal" && lz > c.logZ+math.Log(massFactor) {
				t.Errorf("%s: batch %d above log Z + log 3", c.name, b)
			}
		}
	}
}
