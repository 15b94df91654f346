package special

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mathext"
)

const eulerGamma = 0.57721566490153286061 // Abramowitz and Stegun 6.1.3
const apery = 1.2020569031595942854       // zeta(3), Abramowitz and Stegun table 23.3

// close reports whether got is within tol of want, relative to max(1, |want|).
func close(got, want, tol float64) bool {
	if math.IsNaN(want) {
		return math.IsNaN(got)
	}
	if math.IsInf(want, 0) {
		return got == want
	}
	return math.Abs(got-want) <= tol*math.Max(1, math.Abs(want))
}

func TestLgammaTable(t *testing.T) {
	// Gamma(x) on [1, 2] from Abramowitz and Stegun table 6.1 (values to
	// 10 digits, from memory of the table; Gamma(1.5) = sqrt(pi)/2 is
	// formula 6.1.9; the minimum Gamma(x0) at the zero x0 of psi is from
	// memory).
	cases := []struct {
		x, gamma, tol float64
	}{
		{1, 1, 1e-15},
		{2, 1, 1e-15},
		{1.1, 0.9513507699, 1e-10},
		{1.25, 0.9064024771, 1e-10},
		{1.5, math.Sqrt(math.Pi) / 2, 1e-15},
		{1.75, 0.9190625268, 1e-10},
		{1.9, 0.9617658319, 1e-10},
		{1.4616321449683623, 0.8856031944108887, 1e-14},
		{0.5, math.Sqrt(math.Pi), 1e-15},       // 6.1.8
		{5, 24, 1e-15},                         // 6.1.6: Gamma(n+1) = n!
		{-0.5, -2 * math.Sqrt(math.Pi), 1e-15}, // 6.1.17 reflection
	}
	for _, c := range cases {
		want := math.Log(math.Abs(c.gamma))
		if got := Lgamma(c.x); !close(got, want, c.tol) {
			t.Errorf("Lgamma(%v) = %.17g, want %.17g", c.x, got, want)
		}
	}
}

func TestDigammaSpecialValues(t *testing.T) {
	ln2 := math.Ln2
	cases := []struct {
		name    string
		x, want float64
		tol     float64
	}{
		{"6.3.2 psi(1)", 1, -eulerGamma, 1e-15},
		{"6.3.2 psi(2)", 2, 1 - eulerGamma, 1e-15},
		{"6.3.2 psi(5)", 5, -eulerGamma + 1 + 1.0/2 + 1.0/3 + 1.0/4, 1e-15},
		{"6.3.3 psi(1/2)", 0.5, -eulerGamma - 2*ln2, 1e-15},
		{"6.3.4 psi(3/2)", 1.5, -eulerGamma - 2*ln2 + 2, 1e-14},
		{"6.3.4 psi(7/2)", 3.5, -eulerGamma - 2*ln2 + 2*(1+1.0/3+1.0/5), 1e-15},
		{"zero x0 of psi (A&S 6.3, value from memory)", 1.4616321449683623, 0, 1e-15},
		{"6.3.5/6.3.3 psi(-1/2) = psi(1/2) + 2", -0.5, -eulerGamma - 2*ln2 + 2, 1e-14},
		{"6.3.7 psi(-3/2)", -1.5, -eulerGamma - 2*ln2 + 2 + 2.0/3, 1e-14},
		{"6.3.2 psi(101)", 101, -eulerGamma + harmonic(100), 1e-15},
		{"pole at -3", -3, math.NaN(), 0},
		{"pole at +0", 0, math.Inf(-1), 0},
		{"+Inf", math.Inf(1), math.Inf(1), 0},
		{"-Inf", math.Inf(-1), math.NaN(), 0},
		{"NaN", math.NaN(), math.NaN(), 0},
	}
	for _, c := range cases {
		if got := Digamma(c.x); !close(got, c.want, c.tol) {
			t.Errorf("%s: Digamma(%v) = %.17g, want %.17g", c.name, c.x, got, c.want)
		}
	}
}

func harmonic(n int) float64 {
	var s float64
	for k := n; k >= 1; k-- {
		s += 1 / float64(k)
	}
	return s
}

func TestPolygammaSpecialValues(t *testing.T) {
	z2 := math.Pi * math.Pi / 6     // zeta(2), A&S 23.2.24
	z4 := math.Pow(math.Pi, 4) / 90 // zeta(4), A&S 23.2.25
	cases := []struct {
		name    string
		n       int
		x, want float64
		tol     float64
	}{
		// A&S 6.4.2: psi^(n)(1) = (-1)^(n+1) n! zeta(n+1).
		{"6.4.2 psi'(1)", 1, 1, z2, 1e-15},
		{"6.4.2 psi''(1)", 2, 1, -2 * apery, 1e-15},
		{"6.4.2 psi'''(1)", 3, 1, 6 * z4, 1e-15},
		// A&S 6.4.4: psi^(n)(1/2) = (-1)^(n+1) n! (2^(n+1) - 1) zeta(n+1).
		{"6.4.4 psi'(1/2)", 1, 0.5, 3 * z2, 1e-15},
		{"6.4.4 psi''(1/2)", 2, 0.5, -2 * 7 * apery, 1e-15},
		{"6.4.4 psi'''(1/2)", 3, 0.5, 6 * 15 * z4, 1e-15},
		// A&S 6.4.6 recurrence from x = 1: psi^(n)(2) = psi^(n)(1) - (-1)^n n!.
		{"6.4.6 psi'(2)", 1, 2, z2 - 1, 1e-15},
		{"6.4.6 psi''(2)", 2, 2, -2*apery + 2, 1e-15},
		{"6.4.6 psi'''(2)", 3, 2, 6*z4 - 6, 1e-15},
		// Recurrence downwards from 1/2: psi'(-1/2) = psi'(1/2) + 4.
		{"6.4.6 psi'(-1/2)", 1, -0.5, 3*z2 + 4, 1e-15},
		{"6.4.6 psi''(-1/2)", 2, -0.5, -14*apery + 16, 1e-14},
		{"6.4.6 psi'''(-1/2)", 3, -0.5, 90*z4 + 6*16, 1e-15},
		{"order 0 is digamma", 0, 1, -eulerGamma, 1e-15},
		{"order 4 unsupported", 4, 1, math.NaN(), 0},
		{"trigamma pole", 1, -2, math.Inf(1), 0},
		{"tetragamma pole", 2, -2, math.NaN(), 0},
		{"trigamma at +Inf", 1, math.Inf(1), 0, 0},
	}
	for _, c := range cases {
		if got := Polygamma(c.n, c.x); !close(got, c.want, c.tol) {
			t.Errorf("%s: Polygamma(%d, %v) = %.17g, want %.17g", c.name, c.n, c.x, got, c.want)
		}
	}
	if got, want := Trigamma(1), z2; !close(got, want, 1e-15) {
		t.Errorf("Trigamma(1) = %v, want pi^2/6 = %v (A&S 6.4.2)", got, want)
	}
}

// testPoints spans small, moderate and large positive arguments and the
// negative axis away from the poles.
func testPoints() []float64 {
	var xs []float64
	for x := 0.01; x < 30; x *= 1.07 {
		xs = append(xs, x)
	}
	xs = append(xs, 50, 99.5, 1234.5, 1e6, 3.7e10)
	for x := -0.03; x > -12; x -= 0.37 {
		xs = append(xs, x)
	}
	return xs
}

func TestDigammaAgainstGonum(t *testing.T) {
	// Independent implementation: gonum's mathext.Digamma (recurrence to 7
	// and a four-term asymptotic series). Its truncation error is about
	// 5e-11 (checked below against the Taylor series at 1.01), so it
	// bounds the tolerance here.
	for _, x := range testPoints() {
		got, want := Digamma(x), mathext.Digamma(x)
		if math.Abs(got-want) > 1e-10*math.Max(1, math.Abs(want)) {
			t.Errorf("Digamma(%v) = %.17g, gonum %.17g", x, got, want)
		}
	}
}

func TestDigammaTaylor(t *testing.T) {
	// A&S 6.3.14: psi(1+z) = -gamma + sum_{k>=2} (-1)^k zeta(k) z^(k-1),
	// |z| < 1, with zeta(k) from gonum's mathext.Zeta(k, 1). For |z| <= 1/2
	// sixty terms leave a truncation error below 1e-18.
	for z := -0.5; z <= 0.5; z += 0.01 {
		want := -eulerGamma
		p := 1.0
		for k := 2; k <= 60; k++ {
			p *= z
			term := mathext.Zeta(float64(k), 1) * p
			if k%2 == 1 {
				term = -term
			}
			want += term
		}
		if got := Digamma(1 + z); math.Abs(got-want) > 2e-15*math.Max(1, math.Abs(want)) {
			t.Errorf("Digamma(1%+.2f) = %.17g, Taylor series %.17g", z, got, want)
		}
		// And at z - 1 by the recurrence 6.3.5, psi(z) = psi(1+z) - 1/z.
		if math.Abs(z) > 1e-9 {
			w := want - 1/z
			if got := Digamma(z); math.Abs(got-w) > 3e-15*math.Max(1, math.Abs(w)) {
				t.Errorf("Digamma(%.2f) = %.17g, Taylor series and 6.3.5 give %.17g", z, got, w)
			}
		}
	}
}

func TestPolygammaAgainstHurwitzZeta(t *testing.T) {
	// A&S 6.4.10: psi^(n)(x) = (-1)^(n+1) n! zeta(n+1, x), with gonum's
	// mathext.Zeta (the Hurwitz zeta function) as the independent value.
	for n := 1; n <= 3; n++ {
		for _, x := range testPoints() {
			if x <= 0 {
				continue
			}
			want := factorial[n] * mathext.Zeta(float64(n+1), x)
			if n%2 == 0 {
				want = -want
			}
			got := Polygamma(n, x)
			if !close(got, want, 1e-14) {
				t.Errorf("Polygamma(%d, %v) = %.17g, Hurwitz zeta gives %.17g", n, x, got, want)
			}
		}
	}
}

func TestPolygammaIdentities(t *testing.T) {
	for n := 0; n <= 3; n++ {
		sign := 1.0
		if n%2 == 1 {
			sign = -1
		}
		for _, x := range testPoints() {
			if math.Abs(x) > 100 {
				continue
			}
			// A&S 6.4.6: psi^(n)(x+1) = psi^(n)(x) + (-1)^n n! x^-(n+1).
			lhs := Polygamma(n, x+1)
			rhs := Polygamma(n, x) + sign*factorial[n]*math.Pow(x, -float64(n+1))
			scale := math.Abs(Polygamma(n, x)) + math.Abs(factorial[n]*math.Pow(x, -float64(n+1)))
			if math.Abs(lhs-rhs) > 1e-14*math.Max(1, scale) {
				t.Errorf("recurrence n=%d x=%v: %.17g vs %.17g", n, x, lhs, rhs)
			}
		}
	}
	// Each order is the derivative of the one before (central differences,
	// step h; truncation error O(h^2) f''' ~ 1e-8).
	const h = 1e-5
	for n := 0; n < 3; n++ {
		for _, x := range []float64{0.3, 1, 2.5, 7, 15, -0.4, -2.7} {
			fd := (Polygamma(n, x+h) - Polygamma(n, x-h)) / (2 * h)
			if got := Polygamma(n+1, x); !close(got, fd, 1e-6) {
				t.Errorf("d/dx Polygamma(%d, %v): %v, differences give %v", n, x, got, fd)
			}
		}
	}
	// Digamma is the derivative of Lgamma.
	for _, x := range []float64{0.3, 1, 2.5, 7, 15, -0.4, -2.7} {
		fd := (Lgamma(x+h) - Lgamma(x-h)) / (2 * h)
		if got := Digamma(x); !close(got, fd, 1e-7) {
			t.Errorf("d/dx Lgamma(%v): Digamma %v, differences give %v", x, got, fd)
		}
	}
}

func TestLogistic(t *testing.T) {
	cases := []struct {
		x, want, tol float64
	}{
		{0, 0.5, 0},
		{2, 1 / (1 + math.Exp(-2)), 1e-16}, // definition
		{-2, 1 / (1 + math.Exp(2)), 1e-16}, // definition
		{-800, 0, 0},                       // underflows to 0, not NaN
		{800, 1, 0},                        // no overflow
		{-40, math.Exp(-40), 1e-15},        // e^x (1 - e^x + ...) (Taylor)
		{math.Inf(1), 1, 0},
		{math.Inf(-1), 0, 0},
		{math.NaN(), math.NaN(), 0},
	}
	for _, c := range cases {
		got := Logistic(c.x)
		if !(math.IsNaN(c.want) && math.IsNaN(got)) && math.Abs(got-c.want) > c.tol*math.Abs(c.want) {
			t.Errorf("Logistic(%v) = %.17g, want %.17g", c.x, got, c.want)
		}
	}
	// Symmetry logistic(-x) = 1 - logistic(x) (identity).
	for x := -30.0; x <= 30; x += 0.7 {
		if d := Logistic(-x) - (1 - Logistic(x)); math.Abs(d) > 2e-16 {
			t.Errorf("Logistic(-%v) != 1 - Logistic(%v): diff %v", x, x, d)
		}
	}
}

func TestLog1pExp(t *testing.T) {
	for x := -50.0; x <= 50; x += 0.37 {
		// Reference by the identity log(1+e^x) = max(x,0) + log1p(e^-|x|).
		want := math.Max(x, 0) + math.Log1p(math.Exp(-math.Abs(x)))
		if got := Log1pExp(x); !close(got, want, 4e-16) || math.Abs(got-want) > 4e-16*math.Abs(want) {
			t.Errorf("Log1pExp(%v) = %.17g, want %.17g", x, got, want)
		}
	}
	if got := Log1pExp(1000); got != 1000 {
		t.Errorf("Log1pExp(1000) = %v, want 1000 (no overflow)", got)
	}
	if got := Log1pExp(-1000); got != 0 {
		t.Errorf("Log1pExp(-1000) = %v, want 0", got)
	}
	if got := Log1pExp(0); !close(got, math.Ln2, 1e-16) {
		t.Errorf("Log1pExp(0) = %v, want log 2", got)
	}
	if got := Log1pExp(math.Inf(1)); !math.IsInf(got, 1) {
		t.Errorf("Log1pExp(+Inf) = %v", got)
	}
	if got := Log1pExp(math.NaN()); !math.IsNaN(got) {
		t.Errorf("Log1pExp(NaN) = %v", got)
	}
}

func TestLogSumExp(t *testing.T) {
	inf := math.Inf(1)
	cases := []struct {
		name string
		xs   []float64
		want float64
	}{
		{"empty", nil, math.Inf(-1)},
		{"one", []float64{3}, 3},
		{"two equal: log 2 + x", []float64{1000, 1000}, 1000 + math.Ln2},
		{"no overflow", []float64{1000, 999}, 1000 + math.Log1p(math.Exp(-1))},
		{"no underflow", []float64{-1000, -1001}, -1000 + math.Log1p(math.Exp(-1))},
		{"direct", []float64{0.1, 0.2, -0.3}, math.Log(math.Exp(0.1) + math.Exp(0.2) + math.Exp(-0.3))},
		{"all -inf", []float64{-inf, -inf}, -inf},
		{"-inf ignored", []float64{-inf, 2}, 2},
		{"+inf", []float64{1, inf}, inf},
		{"NaN", []float64{1, math.NaN(), inf}, math.NaN()},
	}
	for _, c := range cases {
		if got := LogSumExp(c.xs); !close(got, c.want, 2e-16) {
			t.Errorf("%s: LogSumExp(%v) = %.17g, want %.17g", c.name, c.xs, got, c.want)
		}
	}
}

// TestNormalUpper checks the tabulated normal tail against math.Erfc on a
// dense set of points (1e-10 absolute, the interpolation bound of its doc
// comment with a margin), and the identity Q(x) + Q(-x) = 1.
func TestNormalUpper(t *testing.T) {
	worst := 0.0
	for x := -9.0; x <= 9; x += 1.0 / 1024 / 3 {
		want := 0.5 * math.Erfc(x/math.Sqrt2)
		got := NormalUpper(x)
		worst = math.Max(worst, math.Abs(got-want))
		if s := NormalUpper(x) + NormalUpper(-x); math.Abs(s-1) > 2e-10 {
			t.Fatalf("Q(%g) + Q(%g) = %.17g", x, -x, s)
		}
	}
	t.Logf("largest error %.3g", worst)
	if worst > 1e-10 {
		t.Errorf("largest error %.3g, want <= 1e-10", worst)
	}
}
