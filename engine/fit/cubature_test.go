package fit

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/diff/fd"
	"gonum.org/v1/gonum/mat"
)

func TestHermiteRuleTable(t *testing.T) {
	// Abramowitz and Stegun Table 25.10 (weight e^(-x^2)): n = 2 has nodes
	// ±1/sqrt(2) = ±0.707106781186548 with weights sqrt(pi)/2; n = 3 has 0
	// with weight 2 sqrt(pi)/3 and ±sqrt(3/2) = ±1.224744871391589 with
	// weights sqrt(pi)/6 (closed forms of the tabulated values). For the
	// standard normal the nodes scale by sqrt(2) and weights by 1/sqrt(pi).
	r2, err := newRule(1, 2)
	if err != nil {
		t.Fatal(err)
	}
	for k := range r2.w {
		if math.Abs(math.Abs(r2.z[k])-1) > 1e-14 || math.Abs(r2.w[k]-0.5) > 1e-14 {
			t.Errorf("2-node rule: node %v weight %v, want ±1 and 1/2", r2.z[k], r2.w[k])
		}
	}
	r3, _ := newRule(1, 3)
	for k := range r3.w {
		z, w := r3.z[k], r3.w[k]
		switch {
		case math.Abs(z) < 1e-14:
			if math.Abs(w-2.0/3) > 1e-14 {
				t.Errorf("3-node rule: weight at 0 = %v, want 2/3", w)
			}
		case math.Abs(math.Abs(z)-math.Sqrt(3)) < 1e-13:
			if math.Abs(w-1.0/6) > 1e-14 {
				t.Errorf("3-node rule: weight at %v = %v, want 1/6", z, w)
			}
		default:
			t.Errorf("3-node rule: unexpected node %v", z)
		}
	}
}

func TestTensorRuleMoments(t *testing.T) {
	// Standard normal moments E[z^2k] = (2k-1)!! (closed form), exact for
	// 2k <= 2n-1 in each coordinate, and products factorise.
	for _, c := range []struct{ d, n int }{{1, 20}, {2, 12}, {3, 8}, {4, 6}} {
		r, err := newRule(c.d, c.n)
		if err != nil {
			t.Fatal(err)
		}
		if r.size() != int(math.Pow(float64(c.n), float64(c.d))) {
			t.Errorf("d=%d n=%d: %d nodes", c.d, c.n, r.size())
		}
		sumW, m2, m4, m22, m3 := 0.0, 0.0, 0.0, 0.0, 0.0
		for k, w := range r.w {
			z := r.z[k*c.d : k*c.d+c.d]
			sumW += w
			m2 += w * z[0] * z[0]
			m4 += w * math.Pow(z[0], 4)
			m3 += w * z[0] * z[0] * z[0]
			if c.d > 1 {
				m22 += w * z[0] * z[0] * z[c.d-1] * z[c.d-1]
			}
		}
		check := func(name string, got, want float64) {
			if math.Abs(got-want) > 1e-12 {
				t.Errorf("d=%d n=%d: %s = %v, want %v", c.d, c.n, name, got, want)
			}
		}
		check("sum of weights", sumW, 1)
		check("E[z^2]", m2, 1)
		check("E[z^4]", m4, 3)
		check("E[z^3]", m3, 0)
		if c.d > 1 {
			check("E[z1^2 zd^2]", m22, 1)
		}
	}
	if _, err := newRule(4, 1000); err == nil {
		t.Error("a rule of 1e12 nodes was accepted")
	}
}

// TestDensityDerivatives checks the hand-written test densities' gradients
// and Hessians against central finite differences of log p (gonum diff/fd),
// so the other tests rest on correct derivatives.
func TestDensityDerivatives(t *testing.T) {
	cases := []struct {
		name string
		p    *fnDensity
		x    []float64
	}{
		{"gaussian", gaussianTarget([]float64{1, -1}, []float64{2, 0.5, 0.5, 1}, 0.3), []float64{0.2, 0.7}},
		{"quartic", quartic(), []float64{0.7}},
		{"sextic", sextic(), []float64{-0.9}},
		{"powerExp", powerExp(3), []float64{2.5}},
		{"logGamma", logGamma(3, 2), []float64{0.3}},
		{"mixture", mixture([]float64{0.3, 0.7}, [][]float64{{-1, 0}, {1, 0.5}}, 0.8), []float64{0.2, 0.1}},
		{"banana", banana(0.05), []float64{3, 2}},
		{"smallLogistic", smallLogistic(), []float64{-0.2, 0.9}},
		{"studentT", studentT(3), []float64{1.7}},
	}
	for _, c := range cases {
		d := c.p.Dim()
		g, h := make([]float64, d), make([]float64, d*d)
		c.p.LogDensityDerivs(c.x, g, h)
		f := func(x []float64) float64 { return c.p.LogDensity(x) }
		fg := fd.Gradient(nil, f, c.x, &fd.Settings{Formula: fd.Central, Step: 1e-5})
		for i := range g {
			if math.Abs(fg[i]-g[i]) > 1e-6*(1+math.Abs(g[i])) {
				t.Errorf("%s: grad[%d] = %v, finite differences %v", c.name, i, g[i], fg[i])
			}
		}
		fh := mat.NewSymDense(d, nil)
		fd.Hessian(fh, f, c.x, &fd.Settings{Formula: fd.Central, Step: 1e-4})
		for i := 0; i < d; i++ {
			for j := 0; j < d; j++ {
				if math.Abs(fh.At(i, j)-h[i*d+j]) > 1e-5*(1+math.Abs(h[i*d+j])) {
					t.Errorf("%s: hess[%d][%d] = %v, finite differences %v", c.name, i, j, h[i*d+j], fh.At(i, j))
				}
			}
		}
	}
}
