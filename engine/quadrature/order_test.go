package quadrature

import (
	"math"
	"testing"
)

// TestScaleOrderPutsTheScaleOutside: in a normal location whose variance
// has a gamma prior (z | g ~ N(0, g), g ~ Gamma(3, 2), x | z ~ N(z, 1)),
// moving z changes the curvature of log g by about as much as moving log g
// changes z's, but only evenly; the order puts g outside, and the rule's
// log Z (0: every factor is normalised) is then right to the target and
// covered by its estimate. With z outside the outer integrand is the
// marginal of z, a variance-gamma density with a |z|^5 term at 0: the
// trapezoid rule's error fell like h^6, and the rule, refined to h = 1/8,
// was off by 3e-7, twenty times its estimate (with a fourth parameter,
// w | x ~ N(x, 1/2), by 1.7e-5 at h = 1/4).
func TestScaleOrderPutsTheScaleOutside(t *testing.T) {
	pr := compile(t, "param g in [0, inf]\nparam z\nparam x\nld_gamma(g, 3, 2) + ld_normal(z, 0, sqrt(g)) + ld_normal(x, z, 1)\n")
	if o := ScaleOrder(pr.p, pr.start); o[0] != 0 {
		t.Errorf("order %v, want g (0) outside", o)
	}
	res := pr.integrate(t, Settings{})
	err := math.Abs(res.LogZ)
	t.Logf("order %v: log Z %.3g, estimate %.2g, %d points", res.Order, res.LogZ, res.LogZErr, res.Points)
	if res.Order[0] != 0 {
		t.Errorf("rule's order %v, want g outside", res.Order)
	}
	if err > 1e-6 || err > res.LogZErr {
		t.Errorf("log Z %.3g, want 0 within 1e-6 and within its estimate %.2g", res.LogZ, res.LogZErr)
	}
	// Var z = E g = 3/2 (the gamma's shape over its rate).
	if v := res.Original.Cov[1*3+1]; math.Abs(v-1.5) > 1.5e-5 {
		t.Errorf("Var z = %.8g, want 1.5", v)
	}
}
