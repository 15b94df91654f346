package special

import "math"

// ChiSquareCDF returns P(X <= x) for a chi-square variable X with d degrees
// of freedom, d a positive integer, by the closed forms for integer d
// (Abramowitz and Stegun 26.4.4 and 26.4.5): for even d = 2k,
// 1 - e^(-x/2) sum_{j<k} (x/2)^j / j!; for odd d = 2k+1,
// erf(sqrt(x/2)) - e^(-x/2) sqrt(2/pi) sum_{j=1..k} x^(j-1/2) / (1*3*...*(2j-1)).
// It returns NaN for d < 1 or NaN x.
func ChiSquareCDF(d int, x float64) float64 {
	switch {
	case d < 1 || math.IsNaN(x):
		return math.NaN()
	case x <= 0:
		return 0
	case math.IsInf(x, 1):
		return 1
	}
	h := x / 2
	if d%2 == 0 {
		term, sum := 1.0, 1.0
		for j := 1; j < d/2; j++ {
			term *= h / float64(j)
			sum += term
		}
		return -math.Expm1(-h) - (sum-1)*math.Exp(-h)
	}
	p := math.Erf(math.Sqrt(h))
	term := math.Sqrt(x) // x^(1/2) / 1
	sum := 0.0
	for j := 1; j <= (d-1)/2; j++ {
		if j > 1 {
			term *= x / float64(2*j-1)
		}
		sum += term
	}
	return p - math.Exp(-h)*math.Sqrt(2/math.Pi)*sum
}

// ChiSquareQuantile returns the p quantile of the chi-square distribution
// with d degrees of freedom (d a positive integer, 0 < p < 1), by bisection
// on ChiSquareCDF to full double precision. It returns NaN outside that
// domain.
func ChiSquareQuantile(d int, p float64) float64 {
	if d < 1 || !(p > 0 && p < 1) {
		return math.NaN()
	}
	lo, hi := 0.0, float64(d)+10
	for ChiSquareCDF(d, hi) < p {
		hi *= 2
		if math.IsInf(hi, 1) {
			return math.NaN()
		}
	}
	for range 200 {
		mid := (lo + hi) / 2
		if mid == lo || mid == hi {
			break
		}
		if ChiSquareCDF(d, mid) < p {
			lo = mid
		} else {
			hi = mid
		}
	}
	return (lo + hi) / 2
}
