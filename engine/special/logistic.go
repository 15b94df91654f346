package special

import "math"

// Logistic returns 1 / (1 + e^-x) without overflow. Its derivative is
// Logistic(x) * (1 - Logistic(x)).
func Logistic(x float64) float64 {
	if x >= 0 {
		return 1 / (1 + Exp(-x))
	}
	e := Exp(x)
	return e / (1 + e)
}

// Log1pExp returns log(1 + e^x) (the softplus function), accurate for all
// x: e^x below -37, x + e^-x above 18, x above 33.3, log1p(e^x) between
// (the thresholds of Maechler, "Accurately computing log(1 - exp(-|a|))",
// 2012, eq. 10). Its derivative is Logistic.
func Log1pExp(x float64) float64 {
	switch {
	case x <= -37:
		return Exp(x)
	case x <= 0:
		return Log1pUnit(Exp(x))
	case x <= 18:
		return math.Log1p(Exp(x))
	case x <= 33.3:
		return x + Exp(-x)
	default:
		return x // also +Inf and NaN
	}
}

// LogSumExp returns log(sum_i e^xs[i]) computed stably by factoring out the
// largest element. It is -Inf for an empty slice or when every element is
// -Inf, +Inf when an element is +Inf, and NaN when an element is NaN.
func LogSumExp(xs []float64) float64 {
	m := math.Inf(-1)
	for _, x := range xs {
		if math.IsNaN(x) {
			return x
		}
		if x > m {
			m = x
		}
	}
	if math.IsInf(m, 0) {
		return m
	}
	var s float64 // sum of e^(x-m) over all but one maximal element
	seen := false
	for _, x := range xs {
		if x == m && !seen {
			seen = true
			continue
		}
		s += Exp(x - m)
	}
	return m + math.Log1p(s)
}
