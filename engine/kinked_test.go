package engine

import (
	"math"
	"slices"
	"testing"

	"gonum.org/v1/gonum/integrate/quad"
)

// A location m and scale b under a Laplace likelihood with the prior 1/b
// (seven invented readings, one far out): the density has a kink in m at
// every reading, where no rule converges fast, so the exact results carry
// larger errors than on smooth densities, and the test is that the stated
// errors cover the actual ones. The reference is ours: with S(m) the sum
// of |y_i - m|, the integral over b is closed (a gamma integral:
// the integral of b^(-1) (2b)^(-n) exp(-S/b) db is 2^(-n) Gamma(n) S^(-n)),
// and E[b | m] = S/(n - 1), E[b^2 | m] = S^2/((n - 1)(n - 2)); the
// remaining integral over m is taken piecewise between the kinks with
// gonum's Gauss-Legendre rule (64 nodes a piece, and the two tails mapped
// to finite intervals), which converges to rounding on each smooth piece.
func TestLaplaceKinksErrorsCover(t *testing.T) {
	y := []float64{2.3, 1.9, 2.8, 2.1, 5.6, 2.4, 1.7}
	src := "y = [2.3, 1.9, 2.8, 2.1, 5.6, 2.4, 1.7]\nparam m\nparam b in [0, inf]\n-log(b) + sum(ld_laplace(y, m, b))\n"
	n := float64(len(y))
	lgN, _ := math.Lgamma(n)
	sOf := func(m float64) float64 {
		s := 0.0
		for _, v := range y {
			s += math.Abs(v - m)
		}
		return s
	}
	logPm := func(m float64) float64 { // log of the density of m, b integrated out
		return -n*math.Ln2 + lgN - n*math.Log(sOf(m))
	}
	knots := slices.Clone(y)
	slices.Sort(knots)
	shift := logPm(knots[len(knots)/2])
	// moments returns the integrals of p(m) g(m) over the line, piece by
	// piece: between the kinks, and on each tail by m = edge -+ (1-u)/u.
	moments := func(g func(m float64) float64) float64 {
		f := func(m float64) float64 { return math.Exp(logPm(m)-shift) * g(m) }
		total := 0.0
		for i := 0; i+1 < len(knots); i++ {
			total += quad.Fixed(f, knots[i], knots[i+1], 64, quad.Legendre{}, 0)
		}
		lo, hi := knots[0], knots[len(knots)-1]
		tail := func(edge, dir float64) float64 {
			return quad.Fixed(func(u float64) float64 {
				x := (1 - u) / u
				return f(edge+dir*x) / (u * u)
			}, 0, 1, 256, quad.Legendre{}, 0)
		}
		return total + tail(lo, -1) + tail(hi, 1)
	}
	z := moments(func(float64) float64 { return 1 })
	logZ := math.Log(z) + shift
	em := moments(func(m float64) float64 { return m }) / z
	em2 := moments(func(m float64) float64 { return m * m }) / z
	eb := moments(func(m float64) float64 { return sOf(m) / (n - 1) }) / z
	eb2 := moments(func(m float64) float64 { s := sOf(m); return s * s / ((n - 1) * (n - 2)) }) / z
	sdM, sdB := math.Sqrt(em2-em*em), math.Sqrt(eb2-eb*eb)

	res := analyseSource(t, src, Options{})
	ex := res.Exact
	t.Logf("reference: log Z %.8f, m %.6f +- %.6f, b %.6f +- %.6f", logZ, em, sdM, eb, sdB)
	t.Logf("engine: log Z %.8f (error %.2g), m %.6f (%.2g), b %.6f (%.2g); grid %v; %s",
		ex.LogZ, ex.LogZErr, ex.Mean[0], ex.MeanErr[0], ex.Mean[1], ex.MeanErr[1], res.Grid.Points, codeList(res))
	if d := math.Abs(ex.LogZ - logZ); !(d <= ex.LogZErr) {
		t.Errorf("log Z %.8f, reference %.8f: off by %.2g, stated error %.2g", ex.LogZ, logZ, d, ex.LogZErr)
	}
	for k, want := range []float64{em, eb} {
		if d := math.Abs(ex.Mean[k] - want); !(d <= ex.MeanErr[k]) {
			t.Errorf("mean %d %.6f, reference %.6f: off by %.2g, stated error %.2g", k, ex.Mean[k], want, d, ex.MeanErr[k])
		}
	}
	// The stated errors are the reference's own, not a free pass: both
	// means within 2 % of an sd.
	if math.Abs(ex.Mean[0]-em) > 0.02*sdM || math.Abs(ex.Mean[1]-eb) > 0.02*sdB {
		t.Errorf("means %v, reference %.6f, %.6f: off by over 0.02 sd", ex.Mean, em, eb)
	}
}
