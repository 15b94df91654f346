package quadrature

import (
	"context"
	"errors"
	"math"
	"testing"
)

// The banana's y (x ~ N(0, 10), y | x ~ N(5 - 0.05 x^2, 1)): given y far
// out, x has two peaks at +-sqrt(20 (5 - y)) and the density underflows
// between them, so the slices' rules walking from a centre lose half the
// mass or all of it. Across a lattice in x over the mass, the walk along y
// gives the quantiles to the truth P(y <= q) = E_x Phi(q - 5 + 0.05 x^2)
// (the trapezoid rule in x here) within 1e-5 in probability (the
// reference cases' 1e-4 sd is 4e-6 at the 2.5 % quantile). A lattice too
// coarse for the peaks (11 points over [-62, 62]) is refused.
func TestCurveAcrossBanana(t *testing.T) {
	pr := compile(t, "param x\nparam y\n-x^2/200 - (y + 0.05*x^2 - 5)^2/2\n")
	res := pr.integrate(t, Settings{})
	cv, err := res.CurveAcross(context.Background(), 1, -62.4, 62.4, 301)
	if err != nil {
		t.Fatal(err)
	}
	probs := []float64{0.025, 0.5, 0.975}
	q := cv.Quantiles(probs)
	for i, p := range probs {
		if e := math.Abs(bananaYCDF(q[i]) - p); !(e <= 1e-5) {
			t.Errorf("quantile %g: %.9g, off by %.2g in probability", p, q[i], e)
		}
	}
	t.Logf("quantiles %v over %d nodes, mass %.12f", q, len(cv.g), cv.total)
	if _, err := res.CurveAcross(context.Background(), 1, -62.4, 62.4, 11); !errors.Is(err, ErrCurve) {
		t.Errorf("11 points across: %v, want ErrCurve", err)
	}
}

// bananaYCDF is P(y <= q) for the banana (x ~ N(0, 10), y | x ~ N(5 -
// 0.05 x^2, 1)): E_x Phi(q - 5 + 0.05 x^2), by the trapezoid rule in x
// (step 0.002 on [-150, 150]).
func bananaYCDF(q float64) float64 {
	const h = 0.002
	s := 0.0
	for x := -150.0; x < 150; x += h {
		s += math.Exp(-x*x/200) * 0.5 * math.Erfc(-(q-5+0.05*x*x)/math.Sqrt2)
	}
	return s * h / math.Sqrt(200*math.Pi)
}
