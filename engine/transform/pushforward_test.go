package transform

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/integrate/quad"
	"gonum.org/v1/gonum/stat/distuv"
)

func TestPushforwardLogIsLogNormal(t *testing.T) {
	// Closed-form moments of the log-normal, checked against gonum's distuv.
	for _, c := range []struct{ m, s float64 }{{0, 0.3}, {1.2, 0.8}, {-2, 0.05}} {
		ln := distuv.LogNormal{Mu: c.m, Sigma: c.s}
		mean, sd := Map{Log, 0, math.Inf(1)}.Pushforward(c.m, c.s)
		if math.Abs(mean-ln.Mean()) > 1e-12*ln.Mean() || math.Abs(sd-ln.StdDev()) > 1e-10*ln.StdDev() {
			t.Errorf("m=%g s=%g: got %g, %g; distuv %g, %g", c.m, c.s, mean, sd, ln.Mean(), ln.StdDev())
		}
		// A lower bound shifts the mean only.
		m2, sd2 := Map{Log, 3, math.Inf(1)}.Pushforward(c.m, c.s)
		if math.Abs(m2-3-mean) > 1e-12 || math.Abs(sd2-sd) > 1e-12 {
			t.Errorf("shifted support changed more than the mean")
		}
	}
	if m, s := (Map{Identity, math.Inf(-1), math.Inf(1)}).Pushforward(1.5, 2); m != 1.5 || s != 2 {
		t.Errorf("identity pushforward %g, %g, want 1.5, 2", m, s)
	}
}

func TestPushforwardLogit(t *testing.T) {
	// The logistic-normal with m = 0 is symmetric about 1/2 (identity of the
	// logistic function, 1 - L(u) = L(-u)); on [2, 6] its mean is 4.
	mp := Map{Logit, 2, 6}
	mean, _ := mp.Pushforward(0, 1.3)
	if math.Abs(mean-4) > 1e-12 {
		t.Errorf("mean %g, want 4", mean)
	}
	// For small s the delta method gives sd ~ (hi-lo) L'(m) s.
	_, sd := Map{Logit, 0, 1}.Pushforward(0.7, 1e-3)
	l := 1 / (1 + math.Exp(-0.7))
	if want := l * (1 - l) * 1e-3; math.Abs(sd-want) > 1e-3*want {
		t.Errorf("small-s sd %g, want %g", sd, want)
	}
	// Against an independent quadrature (gonum's Legendre rule over
	// m ± 12 s) of the same integrals.
	m, s := 0.8, 1.7
	mean, sd = mp.Pushforward(m, s)
	pdf := func(z float64) float64 { return math.Exp(-(z-m)*(z-m)/(2*s*s)) / (s * math.Sqrt(2*math.Pi)) }
	e1 := quad.Fixed(func(z float64) float64 { return mp.ToOriginal(z) * pdf(z) }, m-12*s, m+12*s, 400, nil, 0)
	e2 := quad.Fixed(func(z float64) float64 { d := mp.ToOriginal(z) - e1; return d * d * pdf(z) }, m-12*s, m+12*s, 400, nil, 0)
	if math.Abs(mean-e1) > 1e-12 || math.Abs(sd-math.Sqrt(e2)) > 1e-12 {
		t.Errorf("logit pushforward %g, %g; Legendre quadrature %g, %g", mean, sd, e1, math.Sqrt(e2))
	}
}

func TestInterval(t *testing.T) {
	// exp of the ends: the log-normal's quantiles are e^(m ± z s).
	iv := Map{Log, 0, math.Inf(1)}.Interval([2]float64{-1, 2})
	if math.Abs(iv[0]-math.Exp(-1)) > 1e-15 || math.Abs(iv[1]-math.Exp(2)) > 1e-14 {
		t.Errorf("log interval %v", iv)
	}
}

// covByQuadrature integrates (x_a - E x_a)(x_b - E x_b) against the
// bivariate normal density with gonum's Legendre rule, nested, over
// ±10 standard deviations: an independent check of Covariance.
func covByQuadrature(a, b Map, ma, mb, sa, sb, cab float64) float64 {
	rho := cab / (sa * sb)
	det := 1 - rho*rho
	pdf := func(u, v float64) float64 {
		return math.Exp(-(u*u-2*rho*u*v+v*v)/(2*det)) / (2 * math.Pi * math.Sqrt(det))
	}
	integrate := func(f func(xa, xb float64) float64) float64 {
		return quad.Fixed(func(u float64) float64 {
			return quad.Fixed(func(v float64) float64 {
				return f(a.ToOriginal(ma+sa*u), b.ToOriginal(mb+sb*v)) * pdf(u, v)
			}, -10, 10, 200, nil, 0)
		}, -10, 10, 200, nil, 0)
	}
	ea := integrate(func(xa, _ float64) float64 { return xa })
	eb := integrate(func(_, xb float64) float64 { return xb })
	return integrate(func(xa, xb float64) float64 { return (xa - ea) * (xb - eb) })
}

func TestCovariance(t *testing.T) {
	inf := math.Inf(1)
	id := Map{Identity, math.Inf(-1), inf}
	lg := Map{Log, 1, inf}
	lt := Map{Logit, -1, 3}
	cases := []struct {
		a, b                Map
		ma, mb, sa, sb, cab float64
	}{
		{id, id, 0.5, -1, 1.2, 0.7, 0.3},
		{id, lg, 0.5, -0.2, 1.2, 0.6, -0.4},
		{lg, id, -0.2, 0.5, 0.6, 1.2, -0.4},
		{lg, lg, 0.1, -0.3, 0.5, 0.8, 0.2},
		{id, lt, 2, 0.4, 1.5, 1.1, 0.9},
		{lt, id, 0.4, 2, 1.1, 1.5, 0.9},
		{lg, lt, 0.1, 0.4, 0.5, 1.1, -0.3},
		{lt, lg, 0.4, 0.1, 1.1, 0.5, -0.3},
		{lt, lt, 0.4, -0.6, 1.1, 0.9, 0.75},
		{lt, Map{Logit, 0, 1}, 0.4, -0.6, 1.1, 0.9, 0.75},
		{lt, lt, 0.4, 0.4, 1.1, 0.9, -0.5},
		{lt, Map{Logit, 0, 1}, 0.4, 0.4, 1.1, 1.1, -0.5},
	}
	for _, c := range cases {
		got := Covariance(c.a, c.b, c.ma, c.mb, c.sa, c.sb, c.cab)
		want := covByQuadrature(c.a, c.b, c.ma, c.mb, c.sa, c.sb, c.cab)
		if math.Abs(got-want) > 1e-9*math.Max(1, math.Abs(want)) {
			t.Errorf("%s/%s: covariance %.12g, nested Legendre quadrature %.12g", c.a.Scale, c.b.Scale, got, want)
		}
		// Cov(X, Y) = Cov(Y, X) (the definition), to the last bit: the
		// Result's covariance matrices must be exactly symmetric.
		if back := Covariance(c.b, c.a, c.mb, c.ma, c.sb, c.sa, c.cab); back != got {
			t.Errorf("%s/%s: covariance %.17g, the other way round %.17g", c.a.Scale, c.b.Scale, got, back)
		}
		if Covariance(c.a, c.b, c.ma, c.mb, c.sa, c.sb, 0) != 0 {
			t.Errorf("%s/%s: independent normals gave a covariance", c.a.Scale, c.b.Scale)
		}
	}
	// Two log maps: the bivariate log-normal's covariance
	// e^(ma + mb + (sa^2 + sb^2)/2) (e^cab - 1) (from memory; also the
	// quadrature above).
	got := Covariance(lg, lg, 0.1, -0.3, 0.5, 0.8, 0.2)
	if want := math.Exp(0.1-0.3+(0.25+0.64)/2) * math.Expm1(0.2); math.Abs(got-want) > 1e-15 {
		t.Errorf("log-log covariance %g, want %g", got, want)
	}
}
