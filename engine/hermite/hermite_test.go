package hermite

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/integrate/quad"
)

func TestGaussHermiteAgainstClosedFormsAndGonum(t *testing.T) {
	sp := math.SqrtPi
	// Closed forms: the zeros of H_2 = 4x^2 - 2 and H_3 = 8x^3 - 12x, with
	// weights sqrt(pi)/2; 2 sqrt(pi)/3 and sqrt(pi)/6 (Abramowitz and
	// Stegun 25.4.46 and table 25.10).
	closed := []struct {
		n    int
		x, w []float64
	}{
		{1, []float64{0}, []float64{sp}},
		{2, []float64{-math.Sqrt(0.5), math.Sqrt(0.5)}, []float64{sp / 2, sp / 2}},
		{3, []float64{-math.Sqrt(1.5), 0, math.Sqrt(1.5)}, []float64{sp / 6, 2 * sp / 3, sp / 6}},
	}
	for _, c := range closed {
		x, w := Rule(c.n)
		if len(x) != c.n {
			t.Fatalf("n=%d: %d nodes", c.n, len(x))
		}
		for i := range x {
			if math.Abs(x[i]-c.x[i]) > 1e-14 || math.Abs(w[i]-c.w[i]) > 1e-14 {
				t.Errorf("n=%d node %d: (%v, %v), want (%v, %v)", c.n, i, x[i], w[i], c.x[i], c.w[i])
			}
		}
	}
	// gonum's quad.Hermite, an independent implementation, to 1e-12
	// relative in the weights (tolerance: the weights of the outer nodes
	// are tiny, so relative), and the moments of e^(-x^2): sum w = sqrt(pi),
	// sum w x^2 = sqrt(pi)/2, sum w x^4 = 3 sqrt(pi)/4, sum w x^6 =
	// 15 sqrt(pi)/8 (Gamma-function integrals, A&S 6.1.1).
	for _, n := range []int{4, 7, 12, 20, 40, 64, 100, 150, 200} {
		x, w := Rule(n)
		if len(x) != n {
			t.Fatalf("n=%d: %d nodes", n, len(x))
		}
		gx, gw := make([]float64, n), make([]float64, n)
		quad.Hermite{}.FixedLocations(gx, gw, math.Inf(-1), math.Inf(1))
		for i := range x {
			if math.Abs(x[i]-gx[i]) > 1e-12*math.Max(1, math.Abs(gx[i])) {
				t.Errorf("n=%d node %d: %v, gonum %v", n, i, x[i], gx[i])
			}
			// Weights below 1e-100 (the outermost nodes of rules past about
			// 150 points) contribute nothing in double precision; both
			// implementations lose relative digits there.
			if gw[i] > 1e-100 && math.Abs(w[i]-gw[i]) > 1e-10*gw[i] {
				t.Errorf("n=%d weight %d: %v, gonum %v", n, i, w[i], gw[i])
			}
		}
		var m0, m2, m4, m6 float64
		for i := range x {
			x2 := x[i] * x[i]
			m0 += w[i]
			m2 += w[i] * x2
			m4 += w[i] * x2 * x2
			m6 += w[i] * x2 * x2 * x2
		}
		for _, c := range []struct{ got, want float64 }{{m0, sp}, {m2, sp / 2}, {m4, 3 * sp / 4}, {m6, 15 * sp / 8}} {
			if n >= 4 && math.Abs(c.got-c.want) > 1e-13*c.want {
				t.Errorf("n=%d: moment %v, want %v", n, c.got, c.want)
			}
		}
	}
}

// TestRuleLimits: no rule outside 1..MaxNodes, and the cache hands out the
// same rule twice.
func TestRuleLimits(t *testing.T) {
	if x, w := Rule(0); x != nil || w != nil {
		t.Errorf("Rule(0) = %v, %v, want nil", x, w)
	}
	if x, _ := Rule(MaxNodes + 1); x != nil {
		t.Errorf("Rule(MaxNodes+1) gave %d nodes, want none", len(x))
	}
	a, _ := Rule(9)
	b, _ := Rule(9)
	if &a[0] != &b[0] {
		t.Error("Rule(9) computed twice")
	}
}

func BenchmarkRule200(b *testing.B) {
	for b.Loop() {
		compute(200)
	}
}
