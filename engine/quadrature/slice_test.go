package quadrature

import (
	"math"
	"testing"
)

// TestCurveFarOutSlices: z ~ t_5 written as a normal whose precision g has
// a Gamma(5/2, 5/2) prior, with x | z ~ N(z, 1/2). The walk along z's
// marginal reaches z = 180 before its density is negligible; there the
// conditional of log g sits near -8 and x near z, far from where the
// previous slice's centre puts them, and a slice's shares, taken relative
// to log p at its start, overflowed (the walk failed with a mass of +Inf
// and the grid stood in). The 97.5 % quantile of t_5 is 2.570582 (tables
// of Student's t).
func TestCurveFarOutSlices(t *testing.T) {
	pr := compile(t, "param g in [0, inf]\nparam z\nparam x\nld_gamma(g, 2.5, 2.5) + ld_normal(z, 0, 1/sqrt(g)) + ld_normal(x, z, 0.5)\n")
	res := pr.integrate(t, Settings{})
	cv, err := res.Curve(t.Context(), 1, false)
	if err != nil {
		t.Fatal(err)
	}
	q := cv.Quantiles([]float64{0.5, 0.975})
	t.Logf("median %.3g, 97.5 %% quantile %.7f", q[0], q[1])
	if math.Abs(q[0]) > 1e-6 || math.Abs(q[1]-2.570582) > 1e-5 {
		t.Errorf("quantiles %v, want 0 and 2.570582", q)
	}
}
