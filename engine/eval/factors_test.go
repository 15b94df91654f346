package eval

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/diff/fd"

	"bellcheck/engine/model"
)

func splitSrc(t *testing.T, src string) *Factors {
	t.Helper()
	m, err := model.Parse(src)
	if err != nil {
		t.Fatalf("parse %q: %v", src, err)
	}
	fs, err := SplitFactors(m)
	if err != nil {
		t.Fatalf("split %q: %v", src, err)
	}
	return fs
}

// Models for the factor tests (invented data).
var factorModels = []struct {
	name, src  string
	minFactors int  // at least this many factors
	oneDim     bool // every non-quadratic factor is a function of one linear combination
}{
	{"logistic", "x = [-1.5, -0.3, 0.2, 0.9, 1.7, 2.4]; y = [0, 0, 1, 0, 1, 1]\n" +
		"ld_normal(a, 0, 3) + ld_normal(b, 0, 3) + sum(ld_binomial(y, 1, logistic(a + b*x)))", 6, true},
	{"logistic by hand", "x = [-1.5, -0.3, 0.2, 0.9, 1.7, 2.4]; y = [0, 0, 1, 0, 1, 1]\n" +
		"-(a^2 + b^2)/18 + sum(y*(a + b*x) - log1pexp(a + b*x))", 6, true},
	{"probit", "x = [-1, 0.5, 2]; s = [1, -1, 1]\n-a^2/2 - b^2/2 + sum(log(erfc(-s*(a + b*x)/sqrt(2))/2))", 3, true},
	{"clutter", "y = [1.2, -0.4, 3.1, 9.5]\n-th^2/200 + sum(log(0.8*exp(-(y - th)^2/2)/sqrt(2*pi) + 0.2*exp(-y^2/20)/sqrt(20*pi)))", 4, true},
	{"scale", "y = [1.1, 0.7, 2.3]\nparam s in [0, inf]\nld_gamma(s, 2, 1) + sum(ld_normal(y, m, s))", 2, false},
	{"cost", "y = [0.3, 1.9]\ncost (a - 1)^2 + sum(log1pexp(a*y))", 2, true},
	{"scalar only", "-x^2/2 - y^4/4 + x*y/3", 3, false},
	// A misfit of an ode block's trajectory (the block's components are
	// unrolled into scalars, so the sum splits into scalar terms).
	{"ode misfit", lorenzMisfit, 4, false},
	// Counts of an ode block's state: a state value is one term.
	{"ode counts", decayCounts, 4, false},
}

// decayCounts is a Poisson likelihood of an ode block's state (a decaying
// source's counts at three times, invented), whose terms -I are linear in
// the state: the split must not descend into its Runge-Kutta sums.
const decayCounts = `t = [1, 2, 3]
k = [9, 5, 3]
param r in [0, inf]
param a in [0, inf]
ode t from 0 substeps 8
  I = a rate -r*I
end
sum(ld_poisson(k, I)) + ld_lognormal(r, 0, 1) + ld_lognormal(a, 2, 1)
`

// TestFactorsTakeStatesWhole: the counts' split gives a few terms per
// count and the priors (17 in all), not the Runge-Kutta steps of I (8
// substeps of 4 stages between each pair of times: hundreds of additive
// terms, the split's cap of 256 scalar terms reached).
func TestFactorsTakeStatesWhole(t *testing.T) {
	fs := splitSrc(t, decayCounts)
	if n := fs.Len(); n > 20 {
		t.Errorf("%d factors: want at most 20: a few per count and the priors' and supports'", n)
	}
}

// lorenzMisfit is a strong-constraint 4D-Var cost for the Lorenz-63
// starting state from three readings of x (invented).
const lorenzMisfit = `t = [0.1, 0.2, 0.3]
x_seen = [1.2, 2.0, 2.4]
param x0
param y0
param z0
ode t from 0 substeps 3
  x = x0 rate 10*(y - x)
  y = y0 rate x*(28 - z) - y
  z = z0 rate x*y - 8/3*z
end
cost ((x0 - 1)^2 + (y0 - 1)^2 + (z0 - 20)^2)/32 + sum((x - x_seen)^2)/18
`

// TestFactorsAddUp checks that the factors and the constant add up to the
// compiled model's log-density (an independent evaluation of the same
// model) at random points.
func TestFactorsAddUp(t *testing.T) {
	r := rand.New(rand.NewPCG(1, 2))
	for _, c := range factorModels {
		fs := splitSrc(t, c.src)
		ev := compileSrc(t, c.src)
		if fs.Len() < c.minFactors {
			t.Errorf("%s: %d factors, want at least %d", c.name, fs.Len(), c.minFactors)
		}
		d := fs.Dim()
		for range 20 {
			x := make([]float64, d)
			for k := range x {
				x[k] = r.Float64()*3 - 1
			}
			want := ev.LogDensity(x)
			got := fs.Const()
			for i := 0; i < fs.Len(); i++ {
				got += fs.Log(i, x)
			}
			if !near(got, want, 1e-12, 1) {
				t.Errorf("%s at %v: factors add up to %v, the model gives %v", c.name, x, got, want)
			}
		}
		// Outside a support: -Inf, as the model.
		if c.name == "scale" {
			x := []float64{-0.5, 1}
			if fs.Params()[0].Name != "s" {
				x = []float64{1, -0.5}
			}
			got := fs.Const()
			for i := 0; i < fs.Len(); i++ {
				got += fs.Log(i, x)
			}
			if !math.IsInf(got, -1) || !math.IsInf(ev.LogDensity(x), -1) {
				t.Errorf("scale outside support: factors %v, model %v", got, ev.LogDensity(x))
			}
		}
	}
}

// TestFactorDirections checks the one-linear-combination detection against
// the model as written: a regression's factor i depends on (a, b) through
// a + b*x_i, so its direction is parallel to (1, x_i).
func TestFactorDirections(t *testing.T) {
	xs := []float64{-1.5, -0.3, 0.2, 0.9, 1.7, 2.4}
	for _, c := range factorModels[:2] {
		fs := splitSrc(t, c.src)
		k := 0
		for i := 0; i < fs.Len(); i++ {
			if fs.Quadratic(i) {
				continue
			}
			a := fs.Direction(i)
			if a == nil {
				t.Errorf("%s: factor %d (%s) has no direction", c.name, i, fs.Describe(i))
				continue
			}
			if k >= len(xs) {
				t.Fatalf("%s: more non-quadratic factors than data", c.name)
			}
			// parallel to (1, x_k): a[1] - x_k a[0] == 0
			if math.Abs(a[1]-xs[k]*a[0]) > 1e-14*math.Hypot(a[0], a[1]) || a[0] == 0 {
				t.Errorf("%s: factor %d direction %v, want parallel to (1, %v)", c.name, i, a, xs[k])
			}
			k++
		}
		if k != len(xs) {
			t.Errorf("%s: %d element factors, want %d", c.name, k, len(xs))
		}
	}
	for _, c := range factorModels {
		fs := splitSrc(t, c.src)
		for i := 0; i < fs.Len(); i++ {
			if !fs.Quadratic(i) && c.oneDim && fs.Direction(i) == nil {
				t.Errorf("%s: factor %d (%s) should depend on one linear combination", c.name, i, fs.Describe(i))
			}
		}
	}
	// ld_normal(y, m, s) is not a function of one linear combination of (m, s).
	fs := splitSrc(t, factorModels[4].src)
	for i := 0; i < fs.Len(); i++ {
		if fs.Describe(i) != "a term of the density" && fs.Direction(i) != nil {
			t.Errorf("scale model: factor %d has direction %v", i, fs.Direction(i))
		}
	}
}

// TestFactorQuadratic checks which factors are Gaussian terms: the priors
// and sums of squares are, the logistic and the quartic terms are not.
func TestFactorQuadratic(t *testing.T) {
	fs := splitSrc(t, "y = [1, 2, 4]\n-(a^2)/2 + 3*a*b - b^2 + sum(-(y - a - b)^2) + sum(log1pexp(a*y)) - b^4")
	quad, other := 0, 0
	for i := 0; i < fs.Len(); i++ {
		if fs.Quadratic(i) {
			quad++
		} else {
			other++
		}
	}
	// log1pexp gives 3 element factors, b^4 one; the rest are quadratic.
	if other != 4 || quad == 0 {
		t.Errorf("%d quadratic and %d other factors, want some and 4", quad, other)
	}
}

// TestFactorDerivs compares each factor's gradient and Hessian with central
// finite differences of its value (gonum's diff/fd).
func TestFactorDerivs(t *testing.T) {
	for _, c := range factorModels {
		fs := splitSrc(t, c.src)
		d := fs.Dim()
		x := []float64{0.7, 1.3, 0, 0}[:d]
		g := make([]float64, d)
		h := make([]float64, d*d)
		for i := 0; i < fs.Len(); i++ {
			v := fs.LogDerivs(i, x, g, h)
			if !near(v, fs.Log(i, x), 1e-13, 1) {
				t.Errorf("%s factor %d: value %v, Log gives %v", c.name, i, v, fs.Log(i, x))
			}
			f := func(y []float64) float64 { return fs.Log(i, y) }
			fg := fd.Gradient(nil, f, x, &fd.Settings{Formula: fd.Central})
			for k := range g {
				if !near(g[k], fg[k], 1e-6, 1) {
					t.Errorf("%s factor %d: gradient %v, finite differences %v", c.name, i, g, fg)
					break
				}
			}
			gk := func(k int) func([]float64) float64 {
				return func(y []float64) float64 {
					gg := make([]float64, d)
					hh := make([]float64, d*d)
					fs.LogDerivs(i, y, gg, hh)
					return gg[k]
				}
			}
			for k := 0; k < d; k++ {
				row := fd.Gradient(nil, gk(k), x, &fd.Settings{Formula: fd.Central})
				for j := range row {
					if !near(h[k*d+j], row[j], 1e-6, 1) {
						t.Errorf("%s factor %d: Hessian row %d %v, finite differences %v", c.name, i, k, h[k*d:(k+1)*d], row)
						break
					}
				}
			}
		}
	}
}

// TestFactorBlock checks that a block of points gives what the points give
// one at a time.
func TestFactorBlock(t *testing.T) {
	fs := splitSrc(t, factorModels[0].src)
	xs := []float64{0, 0, 1, -1, 2.5, 0.3, -4, 7}
	out := make([]float64, 4)
	for i := 0; i < fs.Len(); i++ {
		fs.LogBlock(i, xs, out)
		for p := range out {
			if want := fs.Log(i, xs[2*p:2*p+2]); out[p] != want {
				t.Errorf("factor %d point %d: block %v, point %v", i, p, out[p], want)
			}
		}
	}
	// The ode misfit, its factors in turn and back.
	fs = splitSrc(t, lorenzMisfit)
	xs = []float64{0, 0, 20, 1, -1, 25, 2.5, 0.3, 18}
	out = out[:3]
	for _, i := range []int{0, 1, 2, 3, 3, 2, 1, 0} {
		if i >= fs.Len() {
			continue
		}
		fs.LogBlock(i, xs, out)
		for p := range out {
			if want := fs.Log(i, xs[3*p:3*p+3]); out[p] != want {
				t.Errorf("ode misfit factor %d point %d: block %v, point %v", i, p, out[p], want)
			}
		}
	}
}
