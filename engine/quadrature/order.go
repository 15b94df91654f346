package quadrature

import (
	"math"
	"sort"

	"bellcheck/engine/target"
)

// ScaleOrder returns the parameters ordered for the nested rule from the
// curvature around the mode: a parameter on which the others' curvature
// depends (a scale: moving it changes how wide the others are) goes
// outside, so that each of its nodes rescales the inner axes, rather than
// inside, where its conditional would follow the others' heavy marginals.
// The score of parameter a is the sum over the others b of
// |log(-H_bb(mode + 2 sd_a e_a) / -H_bb(mode))| over both signs; the highest
// score comes first. It costs 2d evaluations of the Hessian.
func ScaleOrder(p target.Density, start Start) []int {
	d := p.Dim()
	order := identityOrder(d)
	cov, err := startCov(start, d)
	if err != nil || d == 1 {
		return order
	}
	g := make([]float64, d)
	h0 := make([]float64, d*d)
	h := make([]float64, d*d)
	x := make([]float64, d)
	if f := p.LogDensityDerivs(start.Mode, g, h0); math.IsNaN(f) || math.IsInf(f, 0) {
		return order
	}
	score := make([]float64, d)
	for a := 0; a < d; a++ {
		sd := math.Sqrt(cov[a*d+a])
		for _, sign := range [2]float64{1, -1} {
			copy(x, start.Mode)
			x[a] += sign * 2 * sd
			if f := p.LogDensityDerivs(x, g, h); math.IsNaN(f) || math.IsInf(f, 0) {
				score[a] += 10 // leaving the support within two sds: a boundary axis
				continue
			}
			for b := 0; b < d; b++ {
				if b == a {
					continue
				}
				c0, c1 := -h0[b*d+b], -h[b*d+b]
				if c0 > 0 && c1 > 0 {
					score[a] += math.Abs(math.Log(c1 / c0))
				} else if c0 > 0 {
					score[a] += 10
				}
			}
		}
	}
	sort.SliceStable(order, func(i, j int) bool { return score[order[i]] > score[order[j]]+1e-9 })
	return order
}
