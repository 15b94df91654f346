package grid

import (
	"context"
	"math"
	"sort"
)

// Peak is a local maximum of log p on the grid with the share of the mass
// in its basin.
type Peak struct {
	Index int
	Point []float64
	LogP  float64
	// Mass is the share of the total mass of the nodes whose steepest
	// ascent on the grid ends at this peak.
	Mass float64
}

// Peaks returns the local maxima of log p on the grid, each the highest
// node of its 3^d neighbourhood, with the mass of its basin of steepest
// ascent, by decreasing mass. Nodes more than 46 below the maximum (mass
// share under 1e-20 each) are not assigned. It checks ctx every 65536
// nodes and returns its error when cancelled; progress, when set, receives
// the fraction done.
func (g *Grid) Peaks(ctx context.Context, progress func(float64)) ([]Peak, error) {
	n := len(g.LogP)
	val := func(i int32) float64 {
		v := g.LogP[i]
		if math.IsNaN(v) || math.IsInf(v, 1) {
			return math.Inf(-1)
		}
		return v
	}
	better := func(a, b int32) bool { // a above b in the total order
		va, vb := val(a), val(b)
		return va > vb || (va == vb && a > b)
	}
	cur := make([]int32, n)
	nxt := make([]int32, n)
	for i := range cur {
		cur[i] = int32(i)
	}
	// Argmax over the neighbourhood, one axis at a time: after the pass over
	// axis k, cur[i] is the best node within one step along axes 0..k.
	const every = 1 << 16
	work, done := float64(g.Dim+1)*float64(n), 0.0
	check := func(i int) error {
		if i%every != 0 {
			return nil
		}
		if progress != nil {
			progress(math.Min(1, (done+float64(i))/work))
		}
		return ctx.Err()
	}
	for k := 0; k < g.Dim; k++ {
		s := g.Stride[k]
		nk := g.N[k]
		for i := 0; i < n; i++ {
			if err := check(i); err != nil {
				return nil, err
			}
			c := (i / s) % nk
			b := cur[i]
			if c > 0 && better(cur[i-s], b) {
				b = cur[i-s]
			}
			if c < nk-1 && better(cur[i+s], b) {
				b = cur[i+s]
			}
			nxt[i] = b
		}
		cur, nxt = nxt, cur
		done += float64(n)
	}
	parent := cur
	total := math.Exp(g.Stats.LogZ - g.Max)
	floor := g.Max - 46
	masses := map[int32]float64{}
	ix := make([]int, g.Dim)
	for i := 0; i < n; i++ {
		if err := check(i); err != nil {
			return nil, err
		}
		v := val(int32(i))
		if v < floor {
			continue
		}
		r := int32(i)
		for parent[r] != r {
			r = parent[r]
		}
		// Path compression.
		for j := int32(i); parent[j] != r; {
			j, parent[j] = parent[j], r
		}
		g.Index(i, ix)
		w := 1.0
		for k, ik := range ix {
			w *= g.Weights[k][ik]
		}
		masses[r] += w * math.Exp(v-g.Max) / total
	}
	peaks := make([]Peak, 0, len(masses))
	for r, m := range masses {
		x := make([]float64, g.Dim)
		g.Point(int(r), x)
		peaks = append(peaks, Peak{Index: int(r), Point: x, LogP: g.LogP[r], Mass: m})
	}
	sort.Slice(peaks, func(a, b int) bool {
		if peaks[a].Mass != peaks[b].Mass {
			return peaks[a].Mass > peaks[b].Mass
		}
		return peaks[a].Index < peaks[b].Index
	})
	if progress != nil {
		progress(1)
	}
	return peaks, nil
}
