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
			if v > top { // v is a number: the comparison is max
				top = v
			}
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
	const span = 60 / math.Ln2 // 60 in log-density below the top, in log2
	// The bins need only be monotone in the density (the nodes of the bin
	// where a share is reached are sorted exactly), so a piecewise-linear
	// log2 from the binary exponent and the fraction serves, far cheaper
	// than math.Log (and than math.Frexp, a call under WebAssembly): e +
	// (1.f - 1) for v = 1.f 2^e. A subnormal v (more than 700 below the
	// top in log2) lands in the last bin whatever it gives.
	log2 := func(v float64) float64 {
		b := math.Float64bits(v)
		e := int(b>>52&0x7ff) - 1023
		return float64(e) + math.Float64frombits(b&(1<<52-1)|0x3ff<<52) - 1
	}
	lt := log2(top)
	// Each node's bin, or -1 for a node left out.
	binOf := make([]int16, len(density))
	hist := make([]float64, bins)
	for i, v := range density {
		binOf[i] = -1
		if v > 0 && mass[i] > 0 && !math.IsInf(v, 1) {
			b := min(max(int((lt-log2(v))/span*bins), 0), bins-1)
			binOf[i] = int16(b)
			hist[b] += mass[i]
		}
	}
	// The bin where each share is reached, and the mass above it.
	target := make([]int, len(fractions))
	above := make([]float64, len(fractions))
	for fi, f := range fractions {
		want := f * total
		acc := 0.0
		b := 0
		for ; b < bins-1 && acc+hist[b] < want; b++ {
			acc += hist[b]
		}
		target[fi], above[fi] = b, acc
	}
	// The nodes of the target bins, gathered in one pass and sorted.
	type node struct{ d, m float64 }
	slot := make([]int16, bins)
	for b := range slot {
		slot[b] = -1
	}
	var in [][]node
	for _, b := range target {
		if slot[b] < 0 {
			slot[b] = int16(len(in))
			in = append(in, nil)
		}
	}
	for i, b := range binOf {
		if b >= 0 && slot[b] >= 0 {
			in[slot[b]] = append(in[slot[b]], node{density[i], mass[i]})
		}
	}
	for _, nodes := range in {
		sort.Slice(nodes, func(a, c int) bool { return nodes[a].d > nodes[c].d })
	}
	for fi, f := range fractions {
		want := f * total
		acc := above[fi]
		out[fi] = math.NaN()
		for _, nd := range in[slot[target[fi]]] {
			acc += nd.m
			out[fi] = nd.d
			if acc >= want {
				break
			}
		}
	}
	return out
}
