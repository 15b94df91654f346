package quadrature

import (
	"math"
	"slices"
	"sort"

	"bellcheck/engine/target"
)

// ScaleOrder returns the parameters ordered for the nested rule from the
// curvature around the mode: a parameter on which the others' curvature
// depends (a scale: moving it changes how wide the others are) goes
// outside, so that each of its nodes rescales the inner axes, rather than
// inside, where its conditional would follow the others' heavy marginals.
// With c0, c+ and c- the curvature -H_bb of another parameter b at the mode
// and at mode +- 2 sd_a e_a, the score of parameter a sums over the others
// |log(c+/c-)|, the part of the change that is odd in the step, plus a
// quarter of |log(c+ c- / c0^2)|, the even part; the highest score comes
// first. A scale changes the others' curvature one way when it grows and
// the other way when it shrinks; a location whose spread a scale sets
// changes the scale's curvature the same way on both sides (z ~ N(0, g):
// -d2/du2 of z^2/(2g) over u = log g is z^2/(2g), even in z). Taking the
// location outside makes the outer integrand its marginal, which a
// mixture of scales leaves not analytic at the centre (z ~ N(0, g), g ~
// Gamma(3, 2): |z|^5 there, and the trapezoid rule's error falls only
// like h^6: log Z off by 3e-7 at h = 1/8, against 2e-8 at h = 1/4 with g
// outside; see TestScaleOrderPutsTheScaleOutside). It costs 2d
// evaluations of the Hessian.
func ScaleOrder(p target.Density, start Start) []int {
	order, _ := scaleOrder(p, start)
	return order
}

// scaleOrder is ScaleOrder, and reports whether its first parameter is a
// decisive scale (see decisiveScale).
func scaleOrder(p target.Density, start Start) ([]int, bool) {
	d := p.Dim()
	order := identityOrder(d)
	cov, err := startCov(start, d)
	if err != nil || d == 1 {
		return order, false
	}
	g := make([]float64, d)
	h0 := make([]float64, d*d)
	h := make([]float64, d*d)
	x := make([]float64, d)
	if f := p.LogDensityDerivs(start.Mode, g, h0); math.IsNaN(f) || math.IsInf(f, 0) {
		return order, false
	}
	score := make([]float64, d)
	uncorrelated := make([]float64, d) // the same, b's part weighted by 1 - |corr(a, b)|
	logRatio := make([][2]float64, d)  // log(c/c0) of each other parameter, at + and - 2 sd
	for a := 0; a < d; a++ {
		sd := math.Sqrt(cov[a*d+a])
		usable := make([]bool, d)
		for b := range usable {
			usable[b] = true
		}
		for side, sign := range [2]float64{1, -1} {
			copy(x, start.Mode)
			x[a] += sign * 2 * sd
			if f := p.LogDensityDerivs(x, g, h); math.IsNaN(f) || math.IsInf(f, 0) {
				score[a] += 10 // leaving the support within two sds: a boundary axis
				clear(usable)
				continue
			}
			for b := 0; b < d; b++ {
				if b == a {
					continue
				}
				c0, c1 := -h0[b*d+b], -h[b*d+b]
				switch {
				case c0 > 0 && c1 > 0:
					logRatio[b][side] = math.Log(c1 / c0)
				case c0 > 0:
					score[a] += 10
					usable[b] = false
				default:
					usable[b] = false
				}
			}
		}
		for b := 0; b < d; b++ {
			if b == a || !usable[b] {
				continue
			}
			// A change in b's curvature counts in as far as a and b are
			// not correlated: a location coupled to b (an intercept and
			// the group effects it shifts) moves b's curvature through
			// their common term, a scale sets it without moving b.
			up, down := logRatio[b][0], logRatio[b][1]
			corr := math.Abs(cov[a*d+b]) / math.Sqrt(cov[a*d+a]*cov[b*d+b])
			change := math.Abs(up-down) + math.Abs(up+down)/4
			score[a] += change
			uncorrelated[a] += change * (1 - min(corr, 1))
		}
	}
	decisive := false
	if top := slices.Max(uncorrelated); top >= scaleScoreMin {
		first, next := slices.Index(uncorrelated, top), 0.0
		for a, v := range uncorrelated {
			if a != first {
				next = max(next, v)
			}
		}
		decisive = top >= decisiveScale*next
		score = uncorrelated
	}
	sort.SliceStable(order, func(i, j int) bool { return score[order[i]] > score[order[j]]+1e-9 })
	return order, decisive
}

// decisiveScale is how many times the next parameter's score a scale's
// uncorrelated score must be for it to stay outermost whatever the
// pilot's variances say (fromPilot). Two group means under a shared sd
// with a half-Cauchy prior (the sd's score 8.7, the others' 0.84 at
// most): the pilot's variance ratios put the group means outside, where
// the pair of means has a logarithmic ridge along their diagonal (the sd
// near 0 makes them equal), and the walks along the sd at outer nodes next
// to that ridge ran 22 units of log sd from a width of 1e-7 and did not
// end: the rule called the density improper. With the sd outside, each
// of its nodes leaves a Gaussian inside.
const decisiveScale = 4

// scaleScoreMin is the least score, counting only the changes of the
// curvature of parameters uncorrelated with the one moved, of a parameter
// that sets the others' scale. A change of b's curvature counts in the
// second score in as far as a and b are not correlated: a location
// coupled to b (an intercept and the group effects it shifts) moves b's
// curvature through their common term, a scale sets it without moving b
// (two sites' Poisson counts with log-normal effects: the intercept
// scored above the effects' sd, was put outside, and the rule called the
// density improper). Where no parameter reaches it (a regression's
// coefficients: the 3-D sensor's 0.03 at most), the first score orders
// the axes and the pilot's variances reorder them (fromPilot).
const scaleScoreMin = 0.25
