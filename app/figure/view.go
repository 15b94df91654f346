package figure

import "math"

// Tails of the view: a plot shows the range holding all but exactTail of the
// exact density's mass at each end, widened to hold all but fitTail of each
// shown fit's, plus a margin of viewPad of the width on each side, within
// the grid.
const (
	exactTail = 2e-4
	fitTail   = 2e-3
	viewPad   = 0.08
)

// span returns the points of xs where the cumulative mass of the density ys
// (by the trapezoid rule) reaches tail and 1 - tail, interpolated linearly.
func span(xs, ys []float64, tail float64) (lo, hi float64, ok bool) {
	n := min(len(xs), len(ys))
	if n < 2 {
		return 0, 0, false
	}
	cum := make([]float64, n)
	val := func(i int) float64 {
		v := ys[i]
		if math.IsNaN(v) || math.IsInf(v, 0) || v < 0 {
			return 0
		}
		return v
	}
	for i := 1; i < n; i++ {
		cum[i] = cum[i-1] + (val(i)+val(i-1))/2*(xs[i]-xs[i-1])
	}
	total := cum[n-1]
	if !(total > 0) {
		return 0, 0, false
	}
	find := func(target float64) float64 {
		for i := 1; i < n; i++ {
			if cum[i] >= target {
				d := cum[i] - cum[i-1]
				t := 0.0
				if d > 0 {
					t = (target - cum[i-1]) / d
				}
				return xs[i-1] + t*(xs[i]-xs[i-1])
			}
		}
		return xs[n-1]
	}
	return find(tail * total), find((1 - tail) * total), true
}

// viewOf returns the plotted range along one axis: the exact density's span
// joined with each shown fit's, padded, within [xs[0], xs[n-1]]. It falls
// back to the whole grid when the exact density has no mass.
func viewOf(xs []float64, exact []float64, fits [][]float64) (lo, hi float64) {
	n := len(xs)
	glo, ghi := xs[0], xs[n-1]
	lo, hi, ok := span(xs, exact, exactTail)
	if !ok || !(hi > lo) {
		return glo, ghi
	}
	for _, f := range fits {
		if a, b, ok := span(xs, f, fitTail); ok {
			lo, hi = min(lo, a), max(hi, b)
		}
	}
	pad := viewPad * (hi - lo)
	return max(glo, lo-pad), min(ghi, hi+pad)
}

// pairMarginals sums a pair's density over each axis, giving its two 1-D
// marginals up to a constant (enough for spans).
func pairMarginals(nx, ny int, dens []float64) (mx, my []float64) {
	mx, my = make([]float64, nx), make([]float64, ny)
	for iy := range ny {
		for ix := range nx {
			v := dens[iy*nx+ix]
			if math.IsNaN(v) || math.IsInf(v, 0) || v < 0 {
				continue
			}
			mx[ix] += v
			my[iy] += v
		}
	}
	return mx, my
}

// extendByPolylines widens [lo, hi] to hold the coordinate k of the points,
// within [glo, ghi].
func extendByPolylines(lo, hi, glo, ghi float64, k int, lines [][][2]float64) (float64, float64) {
	for _, l := range lines {
		for _, p := range l {
			v := p[k]
			if math.IsNaN(v) || math.IsInf(v, 0) {
				continue
			}
			lo, hi = min(lo, v), max(hi, v)
		}
	}
	return max(glo, lo), min(ghi, hi)
}
