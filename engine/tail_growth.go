package engine

import (
	"math"

	"bellcheck/engine/fit"
)

// superExponential reports a direction along which log p falls faster
// than any exponential of the distance from the fit's mean. It probes each
// coordinate axis, both ways, at 2, 3 and 4 steps from the mean (a step is
// 3 of the fit's sds, and at least 1 on a log or logit fitting scale: a
// factor e on the original one), the fall D(r) = log p(mean) - log p(mean
// + r e_k) there, and finds it when log D rises by more over the last step
// than tailGrowth times the step before, and by over tailGrowthMin. Such a
// log p (-(t/lam)^k along log k: -exp(c e^z)) has E_q[log p] = -inf under
// every Gaussian q, so KL(q||p) is infinite and no reverse-KL optimum
// exists. An exponential fall (a Poisson rate's -e^z) rises by equal steps
// in log D, a Gaussian's (r^2) and any power's by shrinking ones; a fall
// beyond double precision leaves the direction undecided.
func (a *analysis) superExponential(g fit.Gaussian) (axis int, found bool) {
	d := len(g.Mean)
	x := make([]float64, d)
	base := a.pw.LogDensity(g.Mean)
	if math.IsNaN(base) || math.IsInf(base, 0) {
		return 0, false
	}
	for k := 0; k < d; k++ {
		step := 3 * math.Sqrt(g.Cov.At(k, k))
		if !a.maps[k].Scale.IsIdentity() {
			step = max(step, 1)
		}
		for _, sign := range []float64{1, -1} {
			var logFall [3]float64
			ok := true
			for i := range logFall {
				copy(x, g.Mean)
				x[k] += sign * float64(i+2) * step
				fall := base - a.pw.LogDensity(x)
				if !(fall > 0) || math.IsInf(fall, 0) {
					ok = false
					break
				}
				logFall[i] = math.Log(fall)
			}
			if !ok {
				continue
			}
			d1, d2 := logFall[1]-logFall[0], logFall[2]-logFall[1]
			if d2 > tailGrowth*max(d1, 0) && d2 > tailGrowthMin {
				return k, true
			}
		}
	}
	return 0, false
}

// tailGrowth and tailGrowthMin are superExponential's thresholds: a double
// exponential e^(e^z) probed a step of 1 apart grows log D by e (2.7) times
// from step to step; on the Weibull models tried the rises were 9.3 then
// 25.4 and 10.0 then 27.3, a Poisson rate's 1.30 then 1.13 (an
// exponential's rises are equal, a Gaussian's shrink).
const (
	tailGrowth    = 2
	tailGrowthMin = 3
)

// axisName names parameter k's fitting coordinate: "log s" on the log
// scale, "logit p" on the logit scale, its name as it is.
func (a *analysis) axisName(k int) string {
	if sc := a.maps[k].Scale; !sc.IsIdentity() {
		return sc.String() + " " + a.names[k]
	}
	return a.names[k]
}
