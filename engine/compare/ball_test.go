package compare

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/integrate/quad"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"

	"bellcheck/engine/gauss"
)

// The sphere rules integrate the moments of the uniform direction on
// S^(d-1) exactly: area 2, 2 pi, 4 pi, 2 pi^2; E[w1^2] = 1/d, E[w1^4] =
// 3/(d(d+2)), E[w1^2 w2^2] = 1/(d(d+2)) (standard results for the uniform
// distribution on the sphere, from memory).
func TestSphereRule(t *testing.T) {
	areas := []float64{2, 2 * math.Pi, 4 * math.Pi, 2 * math.Pi * math.Pi}
	for d := 1; d <= 4; d++ {
		for _, orders := range ballOrders[d-1] {
			dirs, w := sphereRule(d, orders[1:])
			var area, m2, m4, m22 float64
			for i, wi := range w {
				x := dirs[i*d : (i+1)*d]
				area += wi
				m2 += wi * x[0] * x[0]
				m4 += wi * math.Pow(x[0], 4)
				if d > 1 {
					m22 += wi * x[0] * x[0] * x[d-1] * x[d-1]
				}
			}
			fd := float64(d)
			check := func(name string, got, want float64) {
				if math.Abs(got-want) > 1e-12*max(1, want) {
					t.Errorf("d=%d orders %v: %s %.15g, want %.15g", d, orders, name, got, want)
				}
			}
			check("area", area, areas[d-1])
			check("E[w1^2]", m2/area, 1/fd)
			check("E[w1^4]", m4/area, 3/(fd*(fd+2)))
			if d > 1 {
				check("E[w1^2 wd^2]", m22/area, 1/(fd*(fd+2)))
			}
		}
	}
}

// A normal p and q = N(m, c Cov) with p's mean and covariance: the
// coverage is the chi-square distribution function at c times the 0.95
// quantile (the Mahalanobis square of p under q is chi-square / c). Down
// to c = 0.01, where q is ten times narrower than p and no node set
// following p resolves it.
func TestBallCoverageScaledNormal(t *testing.T) {
	for d := 1; d <= 4; d++ {
		mean := make([]float64, d)
		cov := mat.NewSymDense(d, nil)
		for i := 0; i < d; i++ {
			mean[i] = 0.5 * float64(i)
			cov.SetSym(i, i, 1+float64(i))
			if i > 0 {
				cov.SetSym(i, i-1, 0.4)
			}
		}
		p := newGauss(mean, cov, 0)
		chi := distuv.ChiSquared{K: float64(d)}
		q95 := chi.Quantile(0.95)
		for _, c := range []float64{0.01, 0.3, 1, 2} {
			var qc mat.SymDense
			qc.ScaleSym(c, cov)
			q := prepared(t, gauss.Gaussian{Mean: mean, Cov: &qc})[0]
			got, change, err := ballCoverage(nil, p, q, 0, math.Sqrt(q95))
			if err != nil {
				t.Fatal(err)
			}
			want := chi.CDF(q95 * c)
			if math.Abs(got-want) > 1e-6 || !(change <= 1e-4) {
				t.Errorf("d=%d c=%g: coverage %.8f (change %.2g), want %.8f", d, c, got, change, want)
			}
		}
	}
}

// The mean-field fit of a correlated normal, N(0, (1 - rho^2) I) against
// p = N(0, [[1, rho], [rho, 1]]): with z1, z2 p's principal coordinates
// the coverage is P((1 + rho) z1^2 + (1 - rho) z2^2 <= (1 - rho^2) c),
// c the 0.95 quantile of chi-square 2, a one-dimensional integral after
// z1 = a sin(theta): integral over (-pi/2, pi/2) of phi(a sin theta)
// (2 Phi(b cos theta) - 1) a cos theta, a^2 = (1 - rho^2) c / (1 + rho),
// b^2 = (1 - rho^2) c / (1 - rho); computed here by 400-point
// Gauss-Legendre.
func TestBallCoverageMeanField(t *testing.T) {
	c := distuv.ChiSquared{K: 2}.Quantile(0.95)
	for _, rho := range []float64{0.5, 0.95, 0.99} {
		cov := mat.NewSymDense(2, []float64{1, rho, rho, 1})
		p := newGauss([]float64{0, 0}, cov, 0)
		v := 1 - rho*rho
		q := prepared(t, gauss.Gaussian{Mean: []float64{0, 0}, Cov: mat.NewSymDense(2, []float64{v, 0, 0, v})})[0]
		got, change, err := ballCoverage(nil, p, q, 0, math.Sqrt(c))
		if err != nil {
			t.Fatal(err)
		}
		a, b := math.Sqrt(v*c/(1+rho)), math.Sqrt(v*c/(1-rho))
		std := distuv.UnitNormal
		want := quad.Fixed(func(th float64) float64 {
			return std.Prob(a*math.Sin(th)) * (2*std.CDF(b*math.Cos(th)) - 1) * a * math.Cos(th)
		}, -math.Pi/2, math.Pi/2, 400, quad.Legendre{}, 0)
		t.Logf("rho %g: coverage %.8f (change %.2g), want %.8f", rho, got, change, want)
		if math.Abs(got-want) > 1e-6 || !(change <= 1e-4) {
			t.Errorf("rho %g: coverage %.8f (change %.2g), want %.8f", rho, got, change, want)
		}
	}
}
