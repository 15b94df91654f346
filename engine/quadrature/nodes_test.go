package quadrature

import (
	"context"
	"errors"
	"math"
	"testing"
)

// TestNodeSet: the node set's weighted sums reproduce log Z and the means
// (the same rule: an identity up to rounding), and the nodes of the rule of
// step 2h hold the same integral within the error estimate's scale.
func TestNodeSet(t *testing.T) {
	pr := compile(t, equicorrelated(3, 0.9))
	res := pr.integrate(t, Settings{})
	ns := NodeSet(res.Nodes)
	z := make([]float64, 3)
	var s0, s1 float64
	var c0 float64
	for i := 0; i < ns.Len(); i++ {
		ns.Point(i, z)
		w := math.Exp(ns.LogWeight(i) + ns.LogP(i) - res.LogZ)
		s0 += w
		s1 += w * z[0]
		if res.Nodes.Coarse(i) {
			c0 += 8 * w // 2^d times the fine weight
		}
	}
	check(t, "node sum", s0, 1, 1e-12, -1)                                       // the sums of the rule itself
	check(t, "node mean", s1, res.Unconstrained.Mean[0], 1e-12, -1)              // the same sums
	check(t, "coarse rule", c0, 1, math.Max(1e-3, 10*math.Abs(res.LogZErr)), -1) // the rule of step 2h
}

// TestCancel: a cancelled context stops the rule with its error.
func TestCancel(t *testing.T) {
	pr := compile(t, equicorrelated(4, 0.5))
	ctx, cancel := context.WithCancel(context.Background())
	calls := 0
	s := Settings{Maps: pr.maps, Progress: func(float64) {
		calls++
		if calls == 3 {
			cancel()
		}
	}}
	_, err := Integrate(ctx, pr.p, pr.start, s)
	if !errors.Is(err, context.Canceled) {
		t.Errorf("want context.Canceled, got %v", err)
	}
}

// TestBadStart: bad input gives an error saying what is wrong.
func TestBadStart(t *testing.T) {
	pr := compile(t, equicorrelated(2, 0.5))
	for _, st := range []Start{
		{Mode: []float64{0}, NegHessian: []float64{1, 0, 0, 1}},
		{Mode: []float64{0, math.NaN()}, NegHessian: []float64{1, 0, 0, 1}},
		{Mode: []float64{0, 0}, NegHessian: []float64{1, 2, 2, 1}},
		{Mode: []float64{0, 0}},
	} {
		if _, err := Integrate(context.Background(), pr.p, st, Settings{}); !errors.Is(err, ErrBadStart) {
			t.Errorf("start %v: want ErrBadStart, got %v", st, err)
		}
	}
}

// TestMomentsOf: the moments of the identity map over the node set are the
// rule's own moments (the same sums), and of x = e^z the original scale's.
func TestMomentsOf(t *testing.T) {
	pr := compile(t, "param x in [0, inf]\n2*log(x) - 2*x\n") // Gamma(3, 2)
	res := pr.integrate(t, Settings{})
	id := res.MomentsOf(func(z, y []float64) { copy(y, z) })
	check(t, "mean", id.Mean[0], res.Unconstrained.Mean[0], 1e-10, -1)
	check(t, "var", id.Cov[0], res.Unconstrained.Cov[0], 1e-10, -1)
	ex := res.MomentsOf(func(z, y []float64) { y[0] = math.Exp(z[0]) })
	check(t, "gamma mean", ex.Mean[0], 1.5, 1e-6, ex.MeanErr[0])                 // shape/rate
	check(t, "gamma var", ex.Cov[0], 0.75, 1e-6, ex.CovErr[0])                   // shape/rate^2
	check(t, "gamma kurtosis", ex.ExcessKurtosis[0], 2, 1e-5, ex.KurtosisErr[0]) // 6/shape
}
