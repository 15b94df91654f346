package compare

import (
	"context"
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"

	"bellcheck/engine/gauss"
	"bellcheck/engine/internal/targettest"
	"bellcheck/engine/quadrature"
)

// withDerivs adds the gradient and Hessian of a normal log-density (the
// rule's mode and curvature need them) to newGauss's.
func withDerivs(mean []float64, cov *mat.SymDense, logScale float64) *targettest.Func {
	f := newGauss(mean, cov, logScale)
	d := len(mean)
	var prec mat.SymDense
	var ch mat.Cholesky
	ch.Factorize(cov)
	_ = ch.InverseTo(&prec)
	logP := f.LogP
	f.Derivs = func(x, grad, hess []float64) float64 {
		for i := 0; i < d; i++ {
			grad[i] = 0
			for j := 0; j < d; j++ {
				grad[i] -= prec.At(i, j) * (x[j] - mean[j])
				hess[i*d+j] = -prec.At(i, j)
			}
		}
		return logP(x)
	}
	return f
}

// nodesOf integrates p by the nested rule started at (mean, cov).
func nodesOf(t *testing.T, p *targettest.Func, mean []float64, cov *mat.SymDense) *quadrature.Result {
	t.Helper()
	d := len(mean)
	c := make([]float64, d*d)
	for i := 0; i < d; i++ {
		for j := 0; j < d; j++ {
			c[i*d+j] = cov.At(i, j)
		}
	}
	res, err := quadrature.Integrate(context.Background(), p, quadrature.Start{Mode: mean, Cov: c}, quadrature.Settings{})
	if err != nil {
		t.Fatal(err)
	}
	return res
}

// A Gaussian target against Gaussian fits, on the nested rule's nodes:
// KL both ways against the closed form between normals (klGauss), the
// Hellinger distance against the Bhattacharyya coefficient of two normals
// (hellingerGauss), both closed forms.
func TestNodesAgainstClosedForms(t *testing.T) {
	pm := []float64{1, -1}
	pc := mat.NewSymDense(2, []float64{1, 0.6, 0.6, 2})
	p := withDerivs(pm, pc, 2.5)
	q := nodesOf(t, p, pm, pc)
	cases := []struct {
		name     string
		mean     []float64
		cov      *mat.SymDense
		resolved bool
		tol      float64
	}{
		{"same", pm, pc, true, 1e-9},
		{"shifted and narrower", []float64{1.5, -0.5}, mat.NewSymDense(2, []float64{0.5, 0.1, 0.1, 1}), true, 1e-8},
		{"uncorrelated", []float64{0.8, -1.2}, mat.NewSymDense(2, []float64{1, 0, 0, 2}), true, 1e-8},
		// Wider than the nodes reach: sqrt(p q) decays with p, the nodes hold it.
		{"wide", []float64{1, -1}, mat.NewSymDense(2, []float64{9, 0, 0, 16}), true, 1e-7},
		// Far narrower than the nodes' spacing: the same.
		{"narrow", []float64{1.2, -1}, mat.NewSymDense(2, []float64{1e-4, 0, 0, 1e-4}), false, 1e-7},
	}
	for _, c := range cases {
		res, err := CompareNodes(q.Nodes, prepared(t, gauss.Gaussian{Mean: c.mean, Cov: c.cov}), NodeSettings{
			LogZ: q.LogZ, Density: p, Mean: pm, SD: []float64{1, math.Sqrt2},
		})
		if err != nil {
			t.Fatal(err)
		}
		r := res[0]
		if r.Method != OnNodes || r.Resolved != c.resolved {
			t.Errorf("%s: method %s resolved %v (q mass %g), want resolved %v", c.name, r.Method, r.Resolved, r.QMass, c.resolved)
		}
		if want := klGauss(c.mean, c.cov, pm, pc); math.Abs(r.KLqp-want) > c.tol*math.Max(1, want) {
			t.Errorf("%s: KL(q||p) %.12g, closed form %.12g", c.name, r.KLqp, want)
		}
		if want := klGauss(pm, pc, c.mean, c.cov); math.Abs(r.KLpq-want) > c.tol*math.Max(1, want) {
			t.Errorf("%s: KL(p||q) %.12g, closed form %.12g", c.name, r.KLpq, want)
		}
		if want := hellingerGauss(pm, pc, c.mean, c.cov); math.Abs(r.Hellinger*r.Hellinger-want*want) > c.tol {
			t.Errorf("%s: Hellinger %.12g, closed form %.12g", c.name, r.Hellinger, want)
		}
		// The mean error in sds (identity).
		if want := (c.mean[1] - pm[1]) / math.Sqrt2; math.Abs(r.MeanErrSD[1]-want) > 1e-12 {
			t.Errorf("%s: mean error %g, want %g", c.name, r.MeanErrSD[1], want)
		}
	}
}

// The nodes on another scale than the fit's: p is a normal N(10, 1) in y,
// integrated on z = log y (density p(e^z) e^z); the comparison maps each
// node to y with log |dy/dz| = z. Closed forms as above (the normal's mass
// below y = 0 is below 1e-22: Abramowitz and Stegun 26.2.12's bound).
func TestNodesOnAnotherScale(t *testing.T) {
	py := newGauss([]float64{10}, mat.NewSymDense(1, []float64{1}), 0.7)
	pz := &targettest.Func{D: 1, Derivs: func(z, grad, hess []float64) float64 {
		y := math.Exp(z[0])
		grad[0] = -(y-10)*y + 1
		hess[0] = -(2*y - 10) * y
		return py.LogP([]float64{y}) + z[0]
	}}
	q := nodesOf(t, pz, []float64{math.Log(10)}, mat.NewSymDense(1, []float64{0.01}))
	toY := func(z, y []float64) float64 { y[0] = math.Exp(z[0]); return z[0] }
	qc := mat.NewSymDense(1, []float64{1.5})
	res, err := CompareNodes(q.Nodes, prepared(t, gauss.Gaussian{Mean: []float64{10.3}, Cov: qc}), NodeSettings{
		LogZ: q.LogZ, Density: py, ToFitting: toY, Mean: []float64{10}, SD: []float64{1},
	})
	if err != nil {
		t.Fatal(err)
	}
	pc := mat.NewSymDense(1, []float64{1})
	r := res[0]
	if want := klGauss([]float64{10}, pc, []float64{10.3}, qc); math.Abs(r.KLpq-want) > 1e-8 {
		t.Errorf("KL(p||q) %.12g, closed form %.12g", r.KLpq, want)
	}
	if want := klGauss([]float64{10.3}, qc, []float64{10}, pc); math.Abs(r.KLqp-want) > 1e-8 {
		t.Errorf("KL(q||p) %.12g, closed form %.12g", r.KLqp, want)
	}
	if want := hellingerGauss([]float64{10}, pc, []float64{10.3}, qc); math.Abs(r.Hellinger*r.Hellinger-want*want) > 1e-8 {
		t.Errorf("Hellinger %.12g, closed form %.12g", r.Hellinger, want)
	}
	// Coverage: P(|Y - 10.3| <= 1.96 sqrt(1.5)) for Y ~ N(10, 1) (gonum's
	// normal CDF).
	n := distuv.Normal{Mu: 10, Sigma: 1}
	half := math.Sqrt(distuv.ChiSquared{K: 1}.Quantile(0.95) * 1.5)
	if want := n.CDF(10.3+half) - n.CDF(10.3-half); math.Abs(r.Coverage95-want) > 1e-4 {
		t.Errorf("coverage %.6f, want %.6f", r.Coverage95, want)
	}
}

// With the same mean and covariance c times the exact one, the exact mass in
// q's 95 % region is P(chi-square_d <= q95 / c) (closed form; gonum's distuv
// for the chi-square quantile and distribution function, A&S 26.4).
func TestNodesCoverage(t *testing.T) {
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
		p := withDerivs(mean, cov, 0)
		q := nodesOf(t, p, mean, cov)
		chi := distuv.ChiSquared{K: float64(d)}
		q95 := chi.Quantile(0.95)
		for _, c := range []float64{1, 0.5, 2} {
			var qc mat.SymDense
			qc.ScaleSym(c, cov)
			sd := make([]float64, d)
			for i := range sd {
				sd[i] = math.Sqrt(cov.At(i, i))
			}
			res, err := CompareNodes(q.Nodes, prepared(t, gauss.Gaussian{Mean: mean, Cov: &qc}), NodeSettings{
				LogZ: q.LogZ, Density: p, Mean: mean, SD: sd,
			})
			if err != nil {
				t.Fatal(err)
			}
			want := chi.CDF(q95 * c)
			t.Logf("d=%d c=%g: coverage %.7f, want %.7f (%d nodes)", d, c, res[0].Coverage95, want, q.Nodes.Len())
			// The smoothed indicator's error (coverageOnNodes): below 6e-4
			// at the default step on these cases.
			if got := res[0].Coverage95; math.Abs(got-want) > 1e-3 {
				t.Errorf("d=%d c=%g: coverage %.6f, want %.6f", d, c, got, want)
			}
		}
	}
}
