package grid

import (
	"math"
	"sort"
)

// Levels returns, for each share f in fractions (0 < f < 1), the density
// level L whose superlevel set {density >= L} holds the share f of the
// mass: the highest-density region of that mass. density[i] and mass[i]
// describe the same node; the masses need not be normalised. It bins the
// log-densities, then sorts only the bin where each share is reached.
func Levels(density, mass []float64, fractions []float64) []float64 {
	out := make([]float64, len(fractions))
	top := math.Inf(-1)
	total := 0.0
	for i, v := range density {
		if v > 0 && mass[i] > 0 && !math.IsInf(v, 1) {
			top = math.Max(top, v)
			total += mass[i]
		}
	}
	if !(total > 0) {
		for i := range out {
			out[i] = math.NaN()
		}
		return out
	}
	const bins = 2048
	const span = 60.0 // in log-density below the top
	lt := math.Log(top)
	bin := func(v float64) int {
		b := int((lt - math.Log(v)) / span * bins)
		return min(max(b, 0), bins-1)
	}
	hist := make([]float64, bins)
	for i, v := range density {
		if v > 0 && mass[i] > 0 && !math.IsInf(v, 1) {
			hist[bin(v)] += mass[i]
		}
	}
	for fi, f := range fractions {
		want := f * total
		acc := 0.0
		b := 0
		for ; b < bins-1 && acc+hist[b] < want; b++ {
			acc += hist[b]
		}
		type node struct{ d, m float64 }
		var in []node
		for i, v := range density {
			if v > 0 && mass[i] > 0 && !math.IsInf(v, 1) && bin(v) == b {
				in = append(in, node{v, mass[i]})
			}
		}
		sort.Slice(in, func(a, c int) bool { return in[a].d > in[c].d })
		out[fi] = math.NaN()
		for _, nd := range in {
			acc += nd.m
			out[fi] = nd.d
			if acc >= want {
				break
			}
		}
	}
	return out
}
