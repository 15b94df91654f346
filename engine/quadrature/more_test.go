package quadrature

import (
	"fmt"
	"math"
	"testing"

	"gonum.org/v1/gonum/integrate/quad"
)

// TestRegressionUnknownNoise: y = a + b t + N(0, s^2) with the prior 1/s,
// against Gelman et al., Bayesian Data Analysis, 3rd ed., section 14.2:
// beta | y ~ t_{n-k}(beta_hat, V s^2) with V = (X'X)^-1, s^2 = RSS/(n-k), and
// Z = (2 pi)^(-(n-k)/2) |X'X|^(-1/2) Gamma((n-k)/2) (RSS/2)^(-(n-k)/2) / 2
// (integrate beta, a normal integral, then s, a gamma integral).
func TestRegressionUnknownNoise(t *testing.T) {
	ts := []float64{0, 1, 2, 3, 4, 5}
	ys := []float64{1.2, 1.9, 3.4, 3.6, 5.1, 5.5} // invented
	pr := compile(t, dataLine("t", ts)+dataLine("y", ys)+"param a\nparam b\nparam s in [0, inf]\n-log(s) + sum(ld_normal(y, a + b*t, s))\n")
	res := pr.integrate(t, Settings{})
	n := float64(len(ts))
	var st, stt, sy, sty float64
	for i, x := range ts {
		st += x
		stt += x * x
		sy += ys[i]
		sty += x * ys[i]
	}
	det := n*stt - st*st
	b := (n*sty - st*sy) / det
	a := (sy - b*st) / n
	rss := 0.0
	for i, x := range ts {
		e := ys[i] - a - b*x
		rss += e * e
	}
	nu := n - 2
	s2 := rss / nu
	lg, _ := math.Lgamma(nu / 2)
	logZ := -nu/2*math.Log(2*math.Pi) - math.Log(det)/2 + lg - nu/2*math.Log(rss/2) - math.Log(2)
	check(t, "log Z", res.LogZ, logZ, 1e-6, res.LogZErr)
	u := res.Unconstrained
	// V = (X'X)^-1 = [[stt, -st], [-st, n]] / det; Var beta = V s^2 nu/(nu-2).
	f := s2 * nu / (nu - 2) / det
	v := [2][2]float64{{stt * f, -st * f}, {-st * f, n * f}}
	check(t, "mean a", u.Mean[0], a, 1e-4*math.Sqrt(v[0][0]), u.MeanErr[0])
	check(t, "mean b", u.Mean[1], b, 1e-4*math.Sqrt(v[1][1]), u.MeanErr[1])
	for i := 0; i < 2; i++ {
		for j := 0; j < 2; j++ {
			check(t, fmt.Sprintf("cov %d %d", i, j), u.Cov[i*3+j], v[i][j], 1e-4*math.Sqrt(v[i][i]*v[j][j]), u.CovErr[i*3+j])
		}
	}
	// E s^2 = nu s^2/(nu-2) (scaled inverse chi-square), on the original scale.
	o := res.Original
	es2 := nu * s2 / (nu - 2)
	check(t, "E s^2", o.Cov[8]+o.Mean[2]*o.Mean[2], es2, 1e-4*es2, -1)
	t.Logf("order %v points %d derivs %d; log Z err %.2g est %.2g", res.Order, res.Points, res.Derivs, res.LogZ-logZ, res.LogZErr)
}

// TestGammaBeta: one-parameter closed forms on the log and logit scales.
func TestGammaBeta(t *testing.T) {
	// Gamma(3, rate 2): Z = Gamma(3)/2^3; mean 3/2, var 3/4 (shape/rate^2);
	// log x has mean digamma(3) - log 2 and variance trigamma(3) (A&S 6.3.2,
	// 6.4.4: digamma(3) = 3/2 - Euler's gamma, trigamma(3) = pi^2/6 - 5/4).
	pr := compile(t, "param x in [0, inf]\n2*log(x) - 2*x\n")
	res := pr.integrate(t, Settings{})
	check(t, "gamma log Z", res.LogZ, math.Log(2.0/8), 1e-6, res.LogZErr)
	check(t, "gamma mean", res.Original.Mean[0], 1.5, 1e-4*math.Sqrt(0.75), res.Original.MeanErr[0])
	check(t, "gamma var", res.Original.Cov[0], 0.75, 1e-4*0.75, res.Original.CovErr[0])
	check(t, "gamma skewness", res.Original.Skewness[0], 2/math.Sqrt(3), 1e-4, res.Original.SkewnessErr[0]) // 2/sqrt(shape)
	check(t, "gamma kurtosis", res.Original.ExcessKurtosis[0], 2, 1e-4, res.Original.KurtosisErr[0])        // 6/shape
	euler := 0.5772156649015329
	tg := math.Pi*math.Pi/6 - 1.25
	check(t, "E log x", res.Unconstrained.Mean[0], 1.5-euler-math.Log(2), 1e-4*math.Sqrt(tg), res.Unconstrained.MeanErr[0])
	check(t, "Var log x", res.Unconstrained.Cov[0], tg, 1e-4*tg, res.Unconstrained.CovErr[0])
	t.Logf("gamma: points %d, log Z est %.2g", res.Points, res.LogZErr)

	// Beta(3, 5): Z = B(3, 5) = 2! 4! / 7!; mean 3/8, var ab/((a+b)^2 (a+b+1)).
	pr = compile(t, "param p in [0, 1]\n2*log(p) + 4*log(1-p)\n")
	res = pr.integrate(t, Settings{})
	vb := 15.0 / (64 * 9)
	check(t, "beta log Z", res.LogZ, math.Log(2.0*24/5040), 1e-6, res.LogZErr)
	check(t, "beta mean", res.Original.Mean[0], 3.0/8, 1e-4*math.Sqrt(vb), res.Original.MeanErr[0])
	check(t, "beta var", res.Original.Cov[0], vb, 1e-4*vb, res.Original.CovErr[0])
	// Skewness 2(b-a) sqrt(a+b+1) / ((a+b+2) sqrt(ab)) (the beta family's).
	check(t, "beta skewness", res.Original.Skewness[0], 2*2*3/(10*math.Sqrt(15)), 1e-4, res.Original.SkewnessErr[0])
	t.Logf("beta: points %d, log Z est %.2g", res.Points, res.LogZErr)
}

// TestNegativeBinomial: counts with a negative binomial likelihood of mean
// mu and size r (weak gamma priors), a posterior with a long tail in r,
// against an independent brute-force quadrature: gonum's Gauss-Legendre
// rule of 400 nodes per axis on a wide box of (log mu, log r).
func TestNegativeBinomial(t *testing.T) {
	counts := []float64{0, 3, 1, 7, 2, 12, 0, 4, 5, 1} // invented
	src := dataLine("k", counts) + "param mu in [0, inf]\nparam r in [0, inf]\n" +
		"ld_gamma(mu, 1, 0.1) + ld_gamma(r, 1, 0.1) + sum(lgamma(k + r) - lgamma(r) - lgamma(k + 1) + r*log(r/(r + mu)) + k*log(mu/(r + mu)))\n"
	pr := compile(t, src)
	res := pr.integrate(t, Settings{})

	// The reference: nested Legendre rules on [m-w, m+w] per axis.
	z := make([]float64, 2)
	lo := [2]float64{pr.start.Mode[0] - 8, pr.start.Mode[1] - 12}
	hi := [2]float64{pr.start.Mode[0] + 8, pr.start.Mode[1] + 16}
	ref := pr.p.LogDensity(pr.start.Mode)
	var s0, s1, s2 [2]float64
	var leg quad.Legendre
	const n = 400
	xs, ws := make([]float64, n), make([]float64, n)
	ys, wy := make([]float64, n), make([]float64, n)
	leg.FixedLocations(xs, ws, lo[0], hi[0])
	leg.FixedLocations(ys, wy, lo[1], hi[1])
	for i := range xs {
		for j := range ys {
			z[0], z[1] = xs[i], ys[j]
			w := ws[i] * wy[j] * math.Exp(pr.p.LogDensity(z)-ref)
			for a := 0; a < 2; a++ {
				s0[a] += w
				s1[a] += w * z[a]
				s2[a] += w * z[a] * z[a]
			}
		}
	}
	logZ := ref + math.Log(s0[0])
	check(t, "log Z", res.LogZ, logZ, 1e-6, res.LogZErr)
	u := res.Unconstrained
	for a := 0; a < 2; a++ {
		mean := s1[a] / s0[a]
		v := s2[a]/s0[a] - mean*mean
		check(t, fmt.Sprintf("mean %d", a), u.Mean[a], mean, 1e-4*math.Sqrt(v), u.MeanErr[a])
		check(t, fmt.Sprintf("var %d", a), u.Cov[a*3], v, 1e-4*v, u.CovErr[a*3])
	}
	t.Logf("order %v points %d derivs %d; log Z err %.2g est %.2g", res.Order, res.Points, res.Derivs, res.LogZ-logZ, res.LogZErr)
}

// TestSharpenNeedsASteadyRate: a fourth level replaces the squaring of the
// last change by the rate's extrapolation only where the log-ratios of
// successive changes at least double (the form exp(-c/h) has them double),
// and only downwards. The numbers are the two-mixture reference case's
// changes (0.28, 0.13, 4.0e-4; see sharpen) and the same with the first
// change larger, a rate that slows.
func TestSharpenNeedsASteadyRate(t *testing.T) {
	mk := func(d1, d2, d3 float64) (*Result, *Result) {
		prev := &Result{zLevels: [3]float64{1, 1 - d2, 1 - d2 - d1}}
		res := &Result{zLevels: [3]float64{1, 1 - d3, 1 - d3 - d2}}
		res.discErr = safety * d3 * d3
		res.LogZErr = res.discErr + roundoff
		return prev, res
	}
	prev, res := mk(0.28, 0.13, 4.0e-4)
	res.sharpen(prev, 0.125)
	want := safety * 4.0e-4 * 4.0e-4 * 4.0e-4 / (0.13 * 0.13)
	if math.Abs(res.discErr-want) > 1e-12*want || math.Abs(res.LogZErr-(want+roundoff)) > 1e-12*want {
		t.Errorf("steady rate: discErr %.3g, LogZErr %.3g, want %.3g", res.discErr, res.LogZErr, want)
	}
	// log(0.13/4e-4) = 5.8 < 2 log(200/0.13) = 14.7: the rate slows.
	prev, res = mk(200, 0.13, 4.0e-4)
	before := res.discErr
	res.sharpen(prev, 0.125)
	if res.discErr != before {
		t.Errorf("slowing rate: discErr %.3g, want the squaring %.3g kept", res.discErr, before)
	}
}
