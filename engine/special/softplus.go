package special

import "math"

// Log1pExpNeg returns log(1 + e^-a) for a >= 0 (the softplus of -a: the
// logistic and binomial log-likelihoods' term, and a log-sum-exp of two),
// within 2 units in the last place of math.Log1p(Exp(-a))
// (TestLog1pExpNegAgainstMath). For a < 0, NaN or +Inf it is
// math.Log1p(Exp(-a)).
//
// With y = e^-a in (0, 1]: below 1/128, log1p(y) is its series to y^9;
// above, with u = 1 + y rounded, log(1 + y) = log u + (y - (u - 1)) / u
// (the second term restores the bits of y that u lost), and log u is log
// c + log1p(r), c = 1 + i/128 the table's point at or below u (u - c is
// exact), r = (u - c) / c below 1/128. Go's math.Log1p took a fifth of the 2-D dose example's analysis
// (21 ns natively, 32 under WebAssembly).
func Log1pExpNeg(a float64) float64 {
	if !(a >= 0) || math.IsInf(a, 1) {
		return math.Log1p(Exp(-a))
	}
	return Log1pUnit(Exp(-a))
}

// Log1pUnit returns log(1 + y) for y in [0, 1] (math.Log1p elsewhere and
// for NaN), by the method of Log1pExpNeg.
func Log1pUnit(y float64) float64 {
	if !(y >= 0 && y <= 1) {
		return math.Log1p(y)
	}
	if y < 1.0/logTableN {
		// Below the table's first step: the series in y itself.
		return log1pSeries(y)
	}
	u := 1 + y
	i := int((u - 1) * logTableN)
	c := 1 + float64(i)/logTableN
	r := (u - c) * logTableInv[i]
	// (y - (u - 1)) / u, with 1/c for 1/u: the term is below 1.2e-16, and
	// 1/c is within 1/128 of 1/u (an error below half a unit in the last
	// place of the result, which is at least log(1 + 1/128)).
	return logTable[i] + (logTableErr[i] + log1pSeries(r) + (y-(u-1))*logTableInv[i])
}

// log1pSeries returns log(1 + r) for 0 <= r < 1/128 by its series to r^9
// (the first term left out, r^10/10, is below 1e-19 of r), the polynomial
// after the first term in Estrin's scheme (pairs of terms combined by
// powers of r: a chain of four products where Horner's has eight).
func log1pSeries(r float64) float64 {
	r2 := r * r
	r4 := r2 * r2
	a := (-1.0/2 + r*(1.0/3)) + r2*(-1.0/4+r*(1.0/5))
	b := (-1.0/6 + r*(1.0/7)) + r2*(-1.0/8+r*(1.0/9))
	return r + r2*(a+r4*b)
}

// logTableN: the table holds log(1 + i/N) for i = 0..N.
const logTableN = 128
