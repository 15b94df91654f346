package special

import "math"

// Lgamma returns log|Gamma(x)|, the natural logarithm of the absolute value
// of the gamma function. Its derivative is Digamma.
func Lgamma(x float64) float64 {
	v, _ := math.Lgamma(x)
	return v
}

// Digamma returns psi(x) = d/dx log Gamma(x) (Abramowitz and Stegun 6.3.1).
// It is +Inf at +Inf, NaN at -Inf and at the negative integers, -Inf at +0
// and +Inf at -0 (the limits from the side of the zero's sign).
func Digamma(x float64) float64 { return Polygamma(0, x) }

// Trigamma returns psi'(x), the derivative of Digamma.
func Trigamma(x float64) float64 { return Polygamma(1, x) }

// MaxPolygammaOrder is the highest order Polygamma computes.
const MaxPolygammaOrder = 3

// asymptoticMin is where the asymptotic series takes over from the
// recurrence: at x >= 10 the ten terms kept below leave a relative
// truncation error under 2e-16 for every order 0 to 3.
const asymptoticMin = 10

// bernoulli2k holds the Bernoulli numbers B_2, B_4, ..., B_20
// (Abramowitz and Stegun table 23.2).
var bernoulli2k = [...]float64{
	1.0 / 6, -1.0 / 30, 1.0 / 42, -1.0 / 30, 5.0 / 66,
	-691.0 / 2730, 7.0 / 6, -3617.0 / 510, 43867.0 / 798, -174611.0 / 330,
}

// seriesCoef[n][k-1] is the coefficient B_2k (2k+n-1)! / (2k)! of x^-(2k+n)
// in the asymptotic series of psi^(n) (Abramowitz and Stegun 6.3.18 for
// n = 0, 6.4.11 for n >= 1).
var seriesCoef [MaxPolygammaOrder + 1][len(bernoulli2k)]float64

// factorial[n] = n!.
var factorial = [...]float64{1, 1, 2, 6, 24}

func init() {
	for n := 0; n <= MaxPolygammaOrder; n++ {
		for k := 1; k <= len(bernoulli2k); k++ {
			// (2k+n-1)! / (2k)! = prod_{j=2k+1}^{2k+n-1} j, or 1/(2k) when n = 0.
			c := bernoulli2k[k-1]
			if n == 0 {
				c /= float64(2 * k)
			} else {
				for j := 2*k + 1; j <= 2*k+n-1; j++ {
					c *= float64(j)
				}
			}
			seriesCoef[n][k-1] = c
		}
	}
}

// Polygamma returns psi^(n)(x), the n-th derivative of Digamma, for
// n = 0, 1, 2, 3; other orders give NaN.
//
// For x > 0 it shifts x above 10 by the recurrence
// psi^(n)(x) = psi^(n)(x+1) - (-1)^n n! x^-(n+1) (Abramowitz and Stegun 6.4.6)
// and sums the asymptotic series (6.3.18, 6.4.11). For negative non-integer x
// it uses the reflection formula
// psi^(n)(x) = (-1)^n psi^(n)(1-x) - pi d^n/dx^n cot(pi x) (6.4.7).
//
// At the poles (zero and the negative integers): odd orders are +Inf; even
// orders are NaN at the negative integers and at zero the limit from the side
// of the zero's sign (-Inf at +0 for n = 0, ...).
func Polygamma(n int, x float64) float64 {
	if n < 0 || n > MaxPolygammaOrder {
		return math.NaN()
	}
	switch {
	case math.IsNaN(x):
		return x
	case math.IsInf(x, 1):
		if n == 0 {
			return x
		}
		return 0
	case math.IsInf(x, -1):
		return math.NaN()
	case x == 0:
		if n%2 == 1 {
			return math.Inf(1)
		}
		// psi^(n)(x) ~ (-1)^(n+1) n! / x^(n+1) near 0.
		return math.Copysign(math.Inf(1), -x)
	case x < 0:
		r := x - math.Round(x) // cot(pi x) has period 1; r in [-1/2, 1/2]
		if r == 0 {
			if n%2 == 1 {
				return math.Inf(1)
			}
			return math.NaN()
		}
		sin, cos := math.Sincos(math.Pi * r)
		c := cos / sin
		s2 := 1 + c*c // csc^2
		var t float64 // pi d^n/dx^n cot(pi x)
		switch n {
		case 0:
			t = math.Pi * c
		case 1:
			t = -math.Pi * math.Pi * s2
		case 2:
			t = 2 * math.Pi * math.Pi * math.Pi * c * s2
		case 3:
			t = -2 * math.Pi * math.Pi * math.Pi * math.Pi * s2 * (1 + 3*c*c)
		}
		sign := 1.0
		if n%2 == 1 {
			sign = -1
		}
		return sign*polygammaPos(n, 1-x) - t
	}
	return polygammaPos(n, x)
}

// polygammaPos is Polygamma for finite x > 0.
func polygammaPos(n int, x float64) float64 {
	// Recurrence: psi^(n)(x) = psi^(n)(x+1) + (-1)^(n+1) n! / x^(n+1).
	var shift float64
	for x < asymptoticMin {
		p := x
		for j := 0; j < n; j++ {
			p *= x
		}
		shift += 1 / p
		x++
	}
	signed := factorial[n]
	if n%2 == 0 {
		signed = -signed
	}
	shift *= signed // (-1)^(n+1) n! sum x^-(n+1)

	inv := 1 / x
	inv2 := inv * inv
	coef := &seriesCoef[n]
	var s float64
	for k := len(coef) - 1; k >= 0; k-- {
		s = s*inv2 + coef[k]
	}
	s *= inv2 // sum_k c_k x^-2k
	if n == 0 {
		return shift + (math.Log(x) - 0.5*inv - s)
	}
	// (-1)^(n+1) [ (n-1)!/x^n + n!/(2 x^(n+1)) + x^-n sum_k c_k x^-2k ]
	xn := 1.0
	for j := 0; j < n; j++ {
		xn *= inv
	}
	v := xn * (factorial[n-1] + factorial[n]*0.5*inv + s)
	if n%2 == 0 {
		v = -v
	}
	return shift + v
}
