package quadrature

import (
	"context"
	"math"
	"testing"

	"gonum.org/v1/gonum/integrate/quad"
)

// TestFunnel integrates Neal's funnel (Neal 2003, "Slice sampling", section
// 8): v ~ N(0, 3^2), x_i | v ~ N(0, e^v) (sd e^(v/2)). It is normalised
// (log Z = 0); E x_i = 0, Var x_i = E e^v = e^(9/2) (the normal's moment
// generating function at 1 with variance 9), Cov(x_i, v) = 0 and Cov(x_1,
// x_2) = 0 by symmetry; E x^4 = 3 E e^(2v) = 3 e^18, so the excess kurtosis
// of x_i is 3 e^9 - 3.
func TestFunnel(t *testing.T) {
	for _, tc := range []struct {
		name, src string
		d         int
	}{
		{"2d", "param v\nparam x\nld_normal(v, 0, 3) + ld_normal(x, 0, exp(v/2))\n", 2},
		{"3d", "param v\nparam x1\nparam x2\nld_normal(v, 0, 3) + ld_normal(x1, 0, exp(v/2)) + ld_normal(x2, 0, exp(v/2))\n", 3},
	} {
		t.Run(tc.name, func(t *testing.T) {
			pr := compile(t, tc.src)
			res := pr.integrate(t, Settings{})
			u := res.Unconstrained
			d := tc.d
			check(t, "log Z", res.LogZ, 0, 1e-6, res.LogZErr)
			check(t, "mean v", u.Mean[0], 0, 1e-4*3, u.MeanErr[0])
			check(t, "var v", u.Cov[0], 9, 9e-4, u.CovErr[0])
			vx := math.Exp(4.5)
			for a := 1; a < d; a++ {
				check(t, "mean x", u.Mean[a], 0, 1e-4*math.Sqrt(vx), u.MeanErr[a])
				check(t, "var x", u.Cov[a*d+a], vx, 1e-4*vx, u.CovErr[a*d+a])
				check(t, "cov(v, x)", u.Cov[a], 0, 1e-4*3*math.Sqrt(vx), u.CovErr[a])
				k := 3*math.Exp(9) - 3
				// E x^4 comes from v near 18, six sds out: a looser tolerance (ours).
				check(t, "excess kurtosis x", u.ExcessKurtosis[a], k, 1e-2*k, u.KurtosisErr[a])
			}
			if d == 3 {
				check(t, "cov(x1, x2)", u.Cov[1*d+2], 0, 1e-4*vx, u.CovErr[1*d+2])
			}
			t.Logf("order %v points %d derivs %d nodes %d; log Z err %.2g est %.2g; var x err %.2g est %.2g",
				res.Order, res.Points, res.Derivs, res.Nodes.Len(), res.LogZ, res.LogZErr, u.Cov[d+1]-vx, u.CovErr[d+1])
		})
	}
}

// TestFunnelPlots: the 3-D funnel's marginal of v and its pair marginals,
// as the plots take them (Curve, and Pair with the plot slices' looser
// tolerances and two Newton steps), against the closed forms: v ~ N(0, 9)
// and (v, x1) ~ N(v; 0, 3) N(x1; 0, e^(v/2)) (x2 integrates to one), and
// (x1, x2) ~ integral of N(v; 0, 3) N(x1; 0, e^(v/2)) N(x2; 0, e^(v/2)) dv
// by gonum's fixed Legendre rule over v, 4000 nodes on [-40, 40] (an
// independent 1-D quadrature). A plot needs 1e-4 of the peak.
func TestFunnelPlots(t *testing.T) {
	src := "param v\nparam x1\nparam x2\nld_normal(v, 0, 3) + ld_normal(x1, 0, exp(v/2)) + ld_normal(x2, 0, exp(v/2))\n"
	pr := compile(t, src)
	res := pr.integrate(t, Settings{})
	ctx := context.Background()
	npdf := func(x, sd float64) float64 { return math.Exp(-x*x/(2*sd*sd)) / (sd * math.Sqrt(2*math.Pi)) }
	cv, err := res.Curve(ctx, 0, true)
	if err != nil {
		t.Fatal(err)
	}
	vs := []float64{-8, -4.5, -1, 0, 2, 7}
	for i, got := range cv.Density(vs) {
		check(t, "marginal of v", got, npdf(vs[i], 3), 1e-4*npdf(0, 3), -1)
	}
	xs, x1s := []float64{-6, -2, 0.5, 3}, []float64{-3, -0.2, 0, 0.7, 4}
	pd, err := res.Pair(ctx, 0, 1, xs, x1s)
	if err != nil {
		t.Fatal(err)
	}
	peak := npdf(0, 3) * npdf(0, math.Exp(-3)) // at v = -6, the highest of the v's above
	for a, v := range xs {
		for b, x := range x1s {
			check(t, "pair (v, x1)", pd[a*len(x1s)+b], npdf(v, 3)*npdf(x, math.Exp(v/2)), 1e-4*peak, -1)
		}
	}
	ys := []float64{-5, -1, -0.1, 0.3, 2}
	pd, err = res.Pair(ctx, 1, 2, ys, ys)
	if err != nil {
		t.Fatal(err)
	}
	leg := quad.Legendre{}
	want := func(x1, x2 float64) float64 {
		return quad.Fixed(func(v float64) float64 {
			return npdf(v, 3) * npdf(x1, math.Exp(v/2)) * npdf(x2, math.Exp(v/2))
		}, -40, 40, 4000, leg, 0)
	}
	peak = want(-0.1, -0.1)
	for a, x1 := range ys {
		for b, x2 := range ys {
			check(t, "pair (x1, x2)", pd[a*len(ys)+b], want(x1, x2), 1e-4*peak, -1)
		}
	}
}
