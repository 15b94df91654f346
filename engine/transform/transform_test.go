package transform

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/diff/fd"
	"gonum.org/v1/gonum/integrate/quad"

	"bellcheck/engine/internal/targettest"
)

// gammaBeta is log Gamma(x0; a, b) + log Beta(x1; c, e) (unnormalised), a
// density on [0, inf] x [0, 1] with exact derivatives.
func gammaBeta(a, b, c, e float64) *targettest.Func {
	f := func(x []float64) float64 {
		if x[0] <= 0 || x[1] <= 0 || x[1] >= 1 {
			return math.Inf(-1)
		}
		return (a-1)*math.Log(x[0]) - b*x[0] + (c-1)*math.Log(x[1]) + (e-1)*math.Log(1-x[1])
	}
	return &targettest.Func{D: 2, LogP: f, Derivs: func(x, g, h []float64) float64 {
		g[0] = (a-1)/x[0] - b
		g[1] = (c-1)/x[1] - (e-1)/(1-x[1])
		h[0] = -(a - 1) / (x[0] * x[0])
		h[1], h[2] = 0, 0
		h[3] = -(c-1)/(x[1]*x[1]) - (e-1)/((1-x[1])*(1-x[1]))
		return f(x)
	}}
}

func TestRoundTrip(t *testing.T) {
	cases := []struct {
		m Map
		x float64
	}{
		{Map{Log, 0, math.Inf(1)}, 3.5},
		{Map{Log, -2, math.Inf(1)}, -1.999},
		{Map{Logit, 0, 1}, 0.25},
		{Map{Logit, 2, 7}, 6.9999},
		{Map{Logit, 2, 7}, 2.0001},
		{Map{Identity, math.Inf(-1), math.Inf(1)}, -4},
	}
	for _, c := range cases {
		z := c.m.FromOriginal(c.x)
		if back := c.m.ToOriginal(z); math.Abs(back-c.x) > 1e-12*math.Max(1, math.Abs(c.x)) {
			t.Errorf("%v: x=%g -> z=%g -> %g", c.m, c.x, z, back)
		}
		// log dx/dz against a central difference of ToOriginal.
		h := 1e-5
		num := (c.m.ToOriginal(z+h) - c.m.ToOriginal(z-h)) / (2 * h)
		if got := math.Exp(c.m.LogJacobian(z)); math.Abs(got-num) > 1e-7*math.Max(1, num) {
			t.Errorf("%v at z=%g: dx/dz %g, central difference %g", c.m, z, got, num)
		}
	}
}

func TestCheck(t *testing.T) {
	inf := math.Inf(1)
	bad := []Map{{Log, math.Inf(-1), inf}, {Log, 0, 1}, {Logit, 0, inf}, {Logit, 1, 1}, {Scale("cube"), 0, 1}}
	for _, m := range bad {
		if m.Check() == nil {
			t.Errorf("%+v: no error", m)
		}
	}
	if _, err := Wrap(gammaBeta(2, 1, 2, 3), []Map{{Log, 0, inf}, {Log, 0, 1}}); err == nil {
		t.Error("log scale on [0, 1] accepted")
	}
}

// The transformed derivatives agree with finite differences of the
// transformed log-density (gonum's diff/fd, an independent implementation).
func TestDerivsAgainstFiniteDifferences(t *testing.T) {
	p, err := Wrap(gammaBeta(3, 2, 2.5, 4), []Map{{Log, 0, math.Inf(1)}, {Logit, 0, 1}})
	if err != nil {
		t.Fatal(err)
	}
	for _, z := range [][]float64{{0.3, -0.7}, {-1.2, 1.5}, {2, 0}} {
		g := make([]float64, 2)
		h := make([]float64, 4)
		f := p.LogDensityDerivs(z, g, h)
		if want := p.LogDensity(z); math.Abs(f-want) > 1e-12 {
			t.Errorf("z=%v: value %g vs %g", z, f, want)
		}
		ng := fd.Gradient(nil, p.LogDensity, z, &fd.Settings{Formula: fd.Central})
		for k := range g {
			if math.Abs(g[k]-ng[k]) > 1e-6 {
				t.Errorf("z=%v: grad[%d] %g, finite difference %g", z, k, g[k], ng[k])
			}
		}
		for k := 0; k < 2; k++ {
			gk := func(zz []float64) float64 {
				gg := make([]float64, 2)
				p.LogDensityDerivs(zz, gg, make([]float64, 4))
				return gg[k]
			}
			nh := fd.Gradient(nil, gk, z, &fd.Settings{Formula: fd.Central})
			for l := 0; l < 2; l++ {
				if math.Abs(h[k*2+l]-nh[l]) > 1e-5 {
					t.Errorf("z=%v: hess[%d,%d] %g, finite difference %g", z, k, l, h[k*2+l], nh[l])
				}
			}
		}
	}
}

// The Jacobian keeps the normaliser: the Gamma(a, b) kernel integrates to
// Gamma(a)/b^a on either scale, the Beta(c, e) kernel to B(c, e) (closed
// forms, A&S 6.1.1 and 6.2.1).
func TestNormaliserKept(t *testing.T) {
	a, b, c, e := 3.0, 2.0, 2.5, 4.0
	p, err := Wrap(gammaBeta(a, b, c, e), []Map{{Log, 0, math.Inf(1)}, {Logit, 0, 1}})
	if err != nil {
		t.Fatal(err)
	}
	// Integrate each coordinate separately: the density is a product.
	z0 := func(z float64) float64 {
		return math.Exp(p.LogDensity([]float64{z, 0}) - p.LogDensity([]float64{0, 0}))
	}
	z1 := func(z float64) float64 {
		return math.Exp(p.LogDensity([]float64{0, z}) - p.LogDensity([]float64{0, 0}))
	}
	lg, _ := math.Lgamma(a)
	wantGamma := math.Exp(lg - a*math.Log(b))
	lbc, _ := math.Lgamma(c)
	lbe, _ := math.Lgamma(e)
	lbce, _ := math.Lgamma(c + e)
	wantBeta := math.Exp(lbc + lbe - lbce)
	// z0 and z1 carry the other factor's value at z=0: divide it out.
	base := math.Exp(p.LogDensity([]float64{0, 0}))
	f0 := math.Exp(p.maps[1].LogJacobian(0) + (c-1)*math.Log(0.5) + (e-1)*math.Log(0.5))
	f1 := math.Exp(p.maps[0].LogJacobian(0) + (a-1)*math.Log(1) - b*1)
	got0 := quad.Fixed(z0, -30, 10, 2000, nil, 0) * base / f0
	got1 := quad.Fixed(z1, -40, 40, 2000, nil, 0) * base / f1
	if math.Abs(got0/wantGamma-1) > 1e-9 {
		t.Errorf("gamma normaliser on the log scale %g, want %g", got0, wantGamma)
	}
	if math.Abs(got1/wantBeta-1) > 1e-9 {
		t.Errorf("beta normaliser on the logit scale %g, want %g", got1, wantBeta)
	}
}

func TestBlockMatchesPointwise(t *testing.T) {
	p, _ := Wrap(gammaBeta(3, 2, 2.5, 4), []Map{{Log, 0, math.Inf(1)}, {Identity, 0, 1}})
	cols := [][]float64{{-1, 0, 1, 2}, {0.1, 0.5, 0.9, 1.5}}
	out := make([]float64, 4)
	p.LogDensityBlock(cols, out)
	for i := range out {
		want := p.LogDensity([]float64{cols[0][i], cols[1][i]})
		if !(out[i] == want || math.Abs(out[i]-want) < 1e-12) {
			t.Errorf("point %d: block %g, pointwise %g", i, out[i], want)
		}
	}
	if !math.IsInf(out[3], -1) {
		t.Errorf("outside the support: %g, want -Inf", out[3])
	}
}

// TestUnconstrained: the default scale of each kind of support.
func TestUnconstrained(t *testing.T) {
	inf := math.Inf(1)
	for _, c := range []struct {
		lo, hi float64
		want   Scale
	}{
		{0, inf, Log}, {-3, inf, Log}, {0, 1, Logit}, {-2, 5, Logit},
		{-inf, inf, Identity}, {-inf, 0, Identity},
	} {
		if got := Unconstrained(c.lo, c.hi); got != c.want {
			t.Errorf("[%g, %g]: %s, want %s", c.lo, c.hi, got, c.want)
		}
		if err := Unconstrained(c.lo, c.hi).Check(c.lo, c.hi); err != nil {
			t.Errorf("[%g, %g]: the default does not suit the support: %v", c.lo, c.hi, err)
		}
	}
}

// TestReach: inside the reach x(z) keeps its distance from the bounds
// (x - lo > 0 and a normal number, hi - x > 0), and just beyond the lower
// reach of a bound at 0 it would be below 1e-290.
func TestReach(t *testing.T) {
	for _, m := range []Map{{Log, 0, math.Inf(1)}, {Log, 2, math.Inf(1)}, {Logit, 0, 1}, {Logit, -3, 7}} {
		zlo, zhi := m.Reach()
		if !(zlo < zhi) {
			t.Fatalf("%v: reach [%g, %g]", m, zlo, zhi)
		}
		xlo, xhi := m.ToOriginal(zlo), m.ToOriginal(zhi)
		if !(xlo > m.Lo) || !(xlo-m.Lo >= 1e-300) {
			t.Errorf("%v: x(%g) = %g is not clear of the lower bound", m, zlo, xlo)
		}
		if !(xhi < m.Hi) || math.IsInf(xhi, 0) {
			t.Errorf("%v: x(%g) = %g is not clear of the upper bound", m, zhi, xhi)
		}
	}
	lo, _ := Map{Log, 0, math.Inf(1)}.Reach()
	if x := math.Exp(lo - 1); !(x < 1e-290) {
		t.Errorf("one beyond the reach x = %g, want below 1e-290", x)
	}
}

// TestBlockRoundedToBound: where x(z) rounds onto a bound the block
// evaluation (the integrators' entry) gives NaN, not the model's value
// there. 1/x on [0, 1] on the logit scale is 1 - x, finite everywhere, but
// at z = -750, x = 0 and the model reads +Inf; the density x^-1/2 on the
// log scale is e^(z/2), but at z = -800 the model reads +Inf.
func TestBlockRoundedToBound(t *testing.T) {
	pole := &targettest.Func{D: 1, LogP: func(x []float64) float64 { return -math.Log(x[0]) }}
	p, _ := Wrap(pole, []Map{{Logit, 0, 1}})
	out := make([]float64, 3)
	p.LogDensityBlock([][]float64{{-5, -750, math.Inf(-1)}}, out)
	if want := math.Log1p(-1 / (1 + math.Exp(5))); math.Abs(out[0]-want) > 1e-12 {
		t.Errorf("z = -5: %g, want log(1 - x) = %g", out[0], want)
	}
	if !math.IsNaN(out[1]) {
		t.Errorf("z = -750 (x rounds to 0): %g, want NaN", out[1])
	}
	if !math.IsInf(out[2], -1) {
		t.Errorf("z = -Inf (x on the bound): %g, want -Inf", out[2])
	}
	half := &targettest.Func{D: 1, LogP: func(x []float64) float64 { return -0.5 * math.Log(x[0]) }}
	q, _ := Wrap(half, []Map{{Log, 0, math.Inf(1)}})
	q.LogDensityBlock([][]float64{{-10, -800}}, out[:2])
	if math.Abs(out[0]+5) > 1e-12 || !math.IsNaN(out[1]) {
		t.Errorf("x^-1/2 on the log scale at z = -10, -800: %v, want -5, NaN", out[:2])
	}
}
