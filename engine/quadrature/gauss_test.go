package quadrature

import (
	"fmt"
	"math"
	"testing"
)

// equicorrelated returns the model text of a d-variate normal with unit
// variances and correlation rho (unnormalised: log p = -x' S^-1 x / 2), with
// S^-1 = (I - rho/(1+(d-1)rho) 11') / (1-rho) (Sherman-Morrison).
func equicorrelated(d int, rho float64) string {
	src := ""
	sum, sq := "", ""
	for i := 0; i < d; i++ {
		src += fmt.Sprintf("param x%d\n", i)
		if i > 0 {
			sum += " + "
			sq += " + "
		}
		sum += fmt.Sprintf("x%d", i)
		sq += fmt.Sprintf("x%d^2", i)
	}
	c := rho / (1 + float64(d-1)*rho)
	src += fmt.Sprintf("-((%s) - %.17g*(%s)^2) / (2*%.17g)\n", sq, c, sum, 1-rho)
	return src
}

func TestCorrelatedGaussian(t *testing.T) {
	for _, tc := range []struct {
		d   int
		rho float64
	}{{2, 0.99}, {3, 0.99}, {3, 0.95}, {4, 0.95}, {4, 0.99}} {
		t.Run(fmt.Sprintf("d%d_rho%g", tc.d, tc.rho), func(t *testing.T) {
			pr := compile(t, equicorrelated(tc.d, tc.rho))
			res := pr.integrate(t, Settings{})
			d := float64(tc.d)
			// log Z = d/2 log(2 pi) + log det(S)/2, det S = (1-rho)^(d-1) (1+(d-1) rho).
			logDet := (d-1)*math.Log(1-tc.rho) + math.Log(1+(d-1)*tc.rho)
			want := d/2*math.Log(2*math.Pi) + logDet/2
			check(t, "log Z", res.LogZ, want, 1e-6, res.LogZErr)
			u := res.Unconstrained
			for a := 0; a < tc.d; a++ {
				check(t, fmt.Sprintf("mean %d", a), u.Mean[a], 0, 1e-4, u.MeanErr[a])
				for b := 0; b < tc.d; b++ {
					w := tc.rho // the covariance is the correlation matrix
					if a == b {
						w = 1
					}
					check(t, fmt.Sprintf("cov %d %d", a, b), u.Cov[a*tc.d+b], w, 1e-4, u.CovErr[a*tc.d+b])
				}
				check(t, "skewness", u.Skewness[a], 0, 1e-4, u.SkewnessErr[a])
				check(t, "excess kurtosis", u.ExcessKurtosis[a], 0, 1e-4, u.KurtosisErr[a])
			}
			if res.Improper || u.VarInfinite[0] {
				t.Errorf("a Gaussian called improper (%v) or of infinite variance (%v)", res.Improper, u.VarInfinite)
			}
			t.Logf("points %d, derivs %d, nodes %d, log Z error %.2g (estimate %.2g)", res.Points, res.Derivs, res.Nodes.Len(), res.LogZ-want, res.LogZErr)
		})
	}
}
