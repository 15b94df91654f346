package quadrature

import (
	"context"
	"math"
	"testing"

	"gonum.org/v1/gonum/integrate/quad"
	"gonum.org/v1/gonum/stat/distuv"
)

// TestMarginals: marginal densities, pair densities, contour levels and
// quantiles of the normal model with unknown sd (n = 5 readings, prior
// 1/s), whose marginal of m is Student t with 4 dof, location ybar and
// scale s/sqrt(n) (BDA 3rd ed., section 3.2), evaluated by gonum's
// distuv.StudentsT.
func TestMarginals(t *testing.T) {
	y := readings
	pr := compile(t, dataLine("y", y)+"param m\nparam s in [0, inf]\n-log(s) + sum(ld_normal(y, m, s))\n")
	res := pr.integrate(t, Settings{})
	n := float64(len(y))
	ybar, ss := 0.0, 0.0
	for _, v := range y {
		ybar += v / n
	}
	for _, v := range y {
		ss += (v - ybar) * (v - ybar)
	}
	st := distuv.StudentsT{Mu: ybar, Sigma: math.Sqrt(ss / (n - 1) / n), Nu: n - 1}
	xs := []float64{ybar - 3, ybar - 1, ybar - 0.3, ybar, ybar + 0.2, ybar + 2}
	dens, err := res.Marginal(context.Background(), 0, xs)
	if err != nil {
		t.Fatal(err)
	}
	for i, x := range xs {
		check(t, "marginal of m", dens[i], st.Prob(x), 1e-4*st.Prob(ybar), -1)
	}
	ps := []float64{0.025, 0.5, 0.975}
	q, mass, err := res.Quantiles(context.Background(), 0, ps)
	if err != nil {
		t.Fatal(err)
	}
	check(t, "marginal mass", mass, 1, 1e-5, -1) // the marginal integrates to 1
	for i, p := range ps {
		check(t, "quantile of m", q[i], st.Quantile(p), 1e-4*st.Sigma, -1)
	}
	// The curve's sinc interpolant between its nodes gives the same
	// marginal (the closed form, Student t as above), also on the original
	// scale of s, whose log-scale curve is mapped with the Jacobian:
	// s | y has the density of sqrt(ss / chi2_{n-1}).
	// One of the two curves is the outer axis's walk of the rule itself
	// (outerCurve), the other walks slices: both are checked.
	if res.outer == nil {
		t.Fatal("the rule kept no curve of its outer axis")
	}
	for _, fine := range []bool{true, false} {
		cv, err := res.Curve(context.Background(), 0, fine)
		if err != nil {
			t.Fatal(err)
		}
		for i, v := range cv.Density(xs) {
			check(t, "curve of m", v, st.Prob(xs[i]), 1e-5*st.Prob(ybar), -1)
		}
		cs, err := res.Curve(context.Background(), 1, fine)
		if err != nil {
			t.Fatal(err)
		}
		chi := distuv.ChiSquared{K: n - 1}
		sx := []float64{0.3, 0.6, 0.9, 1.4, 2.5, 4}
		peakS := 0.0
		for _, x := range sx {
			peakS = math.Max(peakS, chi.Prob(ss/(x*x))*2*ss/(x*x*x))
		}
		for i, v := range cs.Density(sx) {
			// P(s <= x) = P(chi2 >= ss/x^2): density chi.Prob(ss/x^2) 2 ss / x^3.
			x := sx[i]
			check(t, "curve of s", v, chi.Prob(ss/(x*x))*2*ss/(x*x*x), 1e-5*peakS, -1)
		}
	}
	// sigma^2 ~ Inv-chi^2(n-1, s^2): P(sigma <= x) = P(chi2_{n-1} >= ss/x^2).
	chi := distuv.ChiSquared{K: n - 1}
	q, _, err = res.Quantiles(context.Background(), 1, ps)
	if err != nil {
		t.Fatal(err)
	}
	for i, p := range ps {
		want := math.Sqrt(ss / chi.Quantile(1-p))
		check(t, "quantile of s", q[i], want, 1e-4*want, -1)
	}
	// The pair density at a point is the normalised joint density itself
	// (d = 2): p(m, s) = s^-(n+1) exp(-(ss + n (m-ybar)^2)/(2 s^2)) / Z'.
	pd, err := res.Pair(context.Background(), 0, 1, []float64{ybar, ybar + 0.3}, []float64{0.5, 0.8})
	if err != nil {
		t.Fatal(err)
	}
	lg, _ := math.Lgamma((n - 1) / 2)
	logZ := -(n-1)/2*math.Log(2*math.Pi) - math.Log(n)/2 + lg - (n-1)/2*math.Log(ss/2) - math.Log(2)
	for a, m := range []float64{ybar, ybar + 0.3} {
		for b, s := range []float64{0.5, 0.8} {
			want := math.Exp(-(n+1)*math.Log(s) - (ss+n*(m-ybar)*(m-ybar))/(2*s*s) - n/2*math.Log(2*math.Pi) - logZ)
			check(t, "pair density", pd[a*2+b], want, 1e-6*want, -1)
		}
	}
}

// TestFunnelMarginal: the marginal density of x1 in the 3-D funnel (v ~
// N(0, 3^2), x1, x2 | v ~ N(0, e^v)) is the integral over v of N(v; 0, 9)
// N(x1; 0, e^v), here by gonum's Gauss-Legendre rule of 2000 nodes on v in
// [-40, 40] (an independent 1-D quadrature); each plot point is a 2-D
// nested rule over (v, x2).
func TestFunnelMarginal(t *testing.T) {
	pr := compile(t, "param v\nparam x1\nparam x2\nld_normal(v, 0, 3) + ld_normal(x1, 0, exp(v/2)) + ld_normal(x2, 0, exp(v/2))\n")
	res := pr.integrate(t, Settings{})
	xs := []float64{0.05, 0.5, 2, 10}
	got, err := res.Marginal(context.Background(), 1, xs)
	if err != nil {
		t.Fatal(err)
	}
	var leg quad.Legendre
	vs, ws := make([]float64, 2000), make([]float64, 2000)
	leg.FixedLocations(vs, ws, -40, 40)
	for i, x := range xs {
		want := 0.0
		for j, v := range vs {
			want += ws[j] * distuv.Normal{Mu: 0, Sigma: 3}.Prob(v) * distuv.Normal{Mu: 0, Sigma: math.Exp(v / 2)}.Prob(x)
		}
		check(t, "funnel marginal", got[i], want, 1e-3*want, -1) // plot accuracy: the slices use step 2h
	}
}
