package fit

import (
	"context"
	"errors"
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// correlatedGaussians are Gaussian targets in one to four dimensions:
// mean, precision (row-major) and the additive constant of log p.
var correlatedGaussians = []struct {
	name string
	mean []float64
	prec []float64
	c    float64
}{
	{"1-D", []float64{1.5}, []float64{4}, -2},
	{"2-D", []float64{-1, 3}, []float64{2, 1.2, 1.2, 1.5}, 0.7},
	{"3-D", []float64{0.5, -2, 10}, []float64{
		3, 0.8, -0.5,
		0.8, 2, 0.6,
		-0.5, 0.6, 1.2}, 5},
	{"4-D", []float64{1, 2, -1, 0.1}, []float64{
		2.0, 0.9, 0.3, -0.2,
		0.9, 1.5, 0.4, 0.1,
		0.3, 0.4, 1.0, 0.3,
		-0.2, 0.1, 0.3, 0.8}, -3},
}

// gaussianTruth returns the target's covariance (gonum mat inverse) and
// log Z = c + (d/2) log 2pi - (1/2) log det P (the Gaussian integral).
func gaussianTruth(t *testing.T, prec []float64, c float64) (*mat.SymDense, float64) {
	t.Helper()
	d := int(math.Sqrt(float64(len(prec))))
	p := mat.NewSymDense(d, append([]float64(nil), prec...))
	var inv mat.Dense
	if err := inv.Inverse(p); err != nil {
		t.Fatal(err)
	}
	cov := mat.NewSymDense(d, nil)
	for i := 0; i < d; i++ {
		for j := i; j < d; j++ {
			cov.SetSym(i, j, 0.5*(inv.At(i, j)+inv.At(j, i)))
		}
	}
	return cov, c + 0.5*float64(d)*math.Log(2*math.Pi) - 0.5*math.Log(mat.Det(p))
}

func TestLaplaceGaussianTargets(t *testing.T) {
	// For a Gaussian target the Laplace fit is the target itself and its
	// evidence is exact (the Gaussian integral).
	for _, c := range correlatedGaussians {
		p := gaussianTarget(c.mean, c.prec, c.c)
		d := len(c.mean)
		start := make([]float64, d)
		for i := range start {
			start[i] = c.mean[i] + 3*float64(i+1) // away from the mode
		}
		modes, err := FindModes(context.Background(), p, [][]float64{start}, nil, nil)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		lf, err := Laplace(modes[0])
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		cov, logZ := gaussianTruth(t, c.prec, c.c)
		checkGaussian(t, c.name+" Laplace", lf.Gaussian, c.mean, cov, 1e-10)
		if math.Abs(lf.LogZ-logZ) > 1e-10 {
			t.Errorf("%s: Laplace log Z = %v, want %v", c.name, lf.LogZ, logZ)
		}
		for i := 0; i < d; i++ {
			for j := 0; j < d; j++ {
				if math.Abs(lf.Precision.At(i, j)-c.prec[i*d+j]) > 1e-12 {
					t.Errorf("%s: precision[%d][%d] = %v, want %v", c.name, i, j, lf.Precision.At(i, j), c.prec[i*d+j])
				}
			}
		}
	}
}

// checkGaussian compares a fit with a mean and covariance, entry by entry.
func checkGaussian(t *testing.T, name string, g Gaussian, mean []float64, cov mat.Symmetric, tol float64) {
	t.Helper()
	for i := range mean {
		if math.Abs(g.Mean[i]-mean[i]) > tol*(1+math.Abs(mean[i])) {
			t.Errorf("%s: mean[%d] = %v, want %v", name, i, g.Mean[i], mean[i])
		}
		for j := range mean {
			if math.Abs(g.Cov.At(i, j)-cov.At(i, j)) > tol*(1+math.Abs(cov.At(i, j))) {
				t.Errorf("%s: cov[%d][%d] = %v, want %v", name, i, j, g.Cov.At(i, j), cov.At(i, j))
			}
		}
	}
}

func TestLaplaceStirling(t *testing.T) {
	// x^n e^-x on x > 0 has its mode at n with -H = 1/n, so the Laplace
	// evidence is n log n - n + (1/2) log(2 pi n): the leading term of
	// Stirling's series for log n! = lgamma(n+1). Abramowitz and Stegun
	// 6.1.41: log Gamma(z) = (z - 1/2) log z - z + (1/2) log 2pi + 1/(12z) -
	// 1/(360z^3) + 1/(1260z^5) - ..., so with log n! = log Gamma(n) + log n,
	// lgamma(n+1) - LogZ = 1/(12n) - 1/(360n^3) + O(n^-5).
	for _, c := range []struct {
		n   float64
		tol float64 // on the corrected difference: the next term 1/(1260 n^5) plus rounding
	}{
		{1, 1e-3}, {2, 3e-5}, {5, 3e-7}, {10, 1e-8}, {50, 1e-11}, {200, 1e-11},
	} {
		modes, err := FindModes(context.Background(), powerExp(c.n), [][]float64{{1}, {3 * c.n}}, []float64{0}, []float64{math.Inf(1)})
		if err != nil {
			t.Fatal(err)
		}
		if len(modes) != 1 || math.Abs(modes[0].X[0]-c.n) > 1e-12*c.n {
			t.Fatalf("n = %v: modes %+v, want one at n", c.n, modes)
		}
		lf, err := Laplace(modes[0])
		if err != nil {
			t.Fatal(err)
		}
		lead := c.n*math.Log(c.n) - c.n + 0.5*math.Log(2*math.Pi*c.n)
		if math.Abs(lf.LogZ-lead) > 1e-12*math.Max(1, math.Abs(lead)) {
			t.Errorf("n = %v: Laplace log Z = %v, Stirling's leading term %v", c.n, lf.LogZ, lead)
		}
		lg, _ := math.Lgamma(c.n + 1)
		diff := lg - lf.LogZ
		series := 1/(12*c.n) - 1/(360*c.n*c.n*c.n)
		if math.Abs(diff-series) > c.tol {
			t.Errorf("n = %v: lgamma(n+1) - Laplace = %v, want 1/(12n) - 1/(360n^3) = %v", c.n, diff, series)
		}
		if math.Abs(lf.Cov.At(0, 0)-c.n) > 1e-10*c.n {
			t.Errorf("n = %v: Laplace variance %v, want n", c.n, lf.Cov.At(0, 0))
		}
	}
}

func TestLaplaceQuarticHasNoFit(t *testing.T) {
	// exp(-x^4/4): -H = 3x^2 vanishes at the mode 0, so there is no Laplace
	// fit.
	modes, err := FindModes(context.Background(), quartic(), [][]float64{{1.3}}, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := Laplace(modes[0]); !errors.Is(err, ErrNotPositiveDefinite) {
		t.Errorf("Laplace of exp(-x^4/4): err = %v, want ErrNotPositiveDefinite", err)
	}
	// The exact mode with H = 0 exactly, built by hand.
	m := Mode{X: []float64{0}, LogDensity: 0, Hess: mat.NewSymDense(1, []float64{0}), Converged: true}
	if _, err := Laplace(m); !errors.Is(err, ErrNotPositiveDefinite) {
		t.Errorf("Laplace with H = 0: err = %v, want ErrNotPositiveDefinite", err)
	}
	// A saddle: H = diag(-1, 1).
	m = Mode{X: []float64{0, 0}, Hess: mat.NewSymDense(2, []float64{-1, 0, 0, 1})}
	if _, err := Laplace(m); !errors.Is(err, ErrNotPositiveDefinite) {
		t.Errorf("Laplace at a saddle: err = %v, want ErrNotPositiveDefinite", err)
	}
	if _, err := Laplace(Mode{X: []float64{0}}); !errors.Is(err, ErrBadInput) {
		t.Errorf("Laplace without a Hessian: err = %v, want ErrBadInput", err)
	}
}

func TestLaplaceMixtureAtOneMode(t *testing.T) {
	// 0.3 N(-5, 1) + 0.7 N(5, 0.5²), far apart: near each mode the density is
	// one weighted Gaussian up to the other's tail, e^-50 or less (by hand),
	// so the Laplace evidence at each mode is the log of that component's
	// weight (each component integrates to its weight).
	p := mixture([]float64{0.3}, [][]float64{{-5}}, 1)
	q := mixture([]float64{0.7}, [][]float64{{5}}, 0.5)
	mix := oneD(func(x float64) (float64, float64, float64) {
		g, h := make([]float64, 1), make([]float64, 1)
		g2, h2 := make([]float64, 1), make([]float64, 1)
		a := p.LogDensityDerivs([]float64{x}, g, h)
		b := q.LogDensityDerivs([]float64{x}, g2, h2)
		m := math.Max(a, b)
		ea, eb := math.Exp(a-m), math.Exp(b-m)
		ra, rb := ea/(ea+eb), eb/(ea+eb)
		f := m + math.Log(ea+eb)
		gr := ra*g[0] + rb*g2[0]
		hs := ra*(h[0]+g[0]*g[0]) + rb*(h2[0]+g2[0]*g2[0]) - gr*gr
		return f, gr, hs
	})
	modes, err := FindModes(context.Background(), mix, [][]float64{{-6}, {-3}, {0.5}, {4}, {7}}, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(modes) != 2 {
		t.Fatalf("found %d modes, want 2: %+v", len(modes), modes)
	}
	// The narrower, heavier component has the higher peak: 0.7/(0.5 sqrt(2pi)).
	want := []struct{ x, logZ, variance float64 }{{5, math.Log(0.7), 0.25}, {-5, math.Log(0.3), 1}}
	for i, w := range want {
		lf, err := Laplace(modes[i])
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(lf.Mean[0]-w.x) > 1e-10 || math.Abs(lf.LogZ-w.logZ) > 1e-10 || math.Abs(lf.Cov.At(0, 0)-w.variance) > 1e-10 {
			t.Errorf("mode %d: mean %v log Z %v variance %v, want %v %v %v", i, lf.Mean[0], lf.LogZ, lf.Cov.At(0, 0), w.x, w.logZ, w.variance)
		}
	}
}
