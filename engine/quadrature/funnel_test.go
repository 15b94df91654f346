package quadrature

import (
	"math"
	"testing"
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
