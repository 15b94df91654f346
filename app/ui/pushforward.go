package ui

import (
	"math"

	"bellcheck/engine"
	"bellcheck/engine/hermite"
)

// hermiteNodes is the Gauss-Hermite rule's size for pushforward moments;
// the transforms are smooth, so 40 nodes are far more than enough.
const hermiteNodes = 40

// Back maps a value on a parameter's fitting scale to its original scale:
// x = lo + e^u on the log scale, x = lo + (hi - lo) / (1 + e^-u) on the
// logit scale.
func Back(sc engine.Scale, lo, hi, u float64) float64 {
	switch sc {
	case engine.Log:
		return lo + math.Exp(u)
	case engine.Logit:
		return lo + (hi-lo)/(1+math.Exp(-u))
	}
	return u
}

// Pushforward returns the mean and standard deviation on the original scale
// of a parameter whose fit is N(m, s^2) on its fitting scale. For the log
// scale they are closed-form (the log-normal's moments); for the logit scale
// they come from Gauss-Hermite quadrature of E[g(m + sqrt(2) s t)] against
// e^(-t^2). The identity scale returns m and s.
func Pushforward(sc engine.Scale, lo, hi, m, s float64) (mean, sd float64) {
	switch sc {
	case engine.Log:
		v := s * s
		mean = lo + math.Exp(m+v/2)
		sd = math.Exp(m+v/2) * math.Sqrt(math.Expm1(v))
		return mean, sd
	case engine.Logit:
		g := func(t float64) float64 { return Back(sc, lo, hi, m+math.Sqrt2*s*t) }
		xs, ws := hermite.Rule(hermiteNodes)
		e1 := 0.0
		for i, t := range xs {
			e1 += ws[i] * g(t)
		}
		e1 /= math.SqrtPi
		e2 := 0.0
		for i, t := range xs {
			d := g(t) - e1
			e2 += ws[i] * d * d
		}
		e2 /= math.SqrtPi
		return e1, math.Sqrt(e2)
	}
	return m, s
}
