package grid

import (
	"context"
	"math"
	"sort"

	"bellcheck/engine/special"
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
// ascent, by decreasing mass. With two or more parameters it works on the
// half-resolution lattice (every other node, with the half-resolution
// rule's weights): the peaks are starts for a Newton search and the masses
// approximate, so the finer lattice would only cost time. Nodes more than
// 46 below the maximum (mass share under 1e-20 each) are not assigned. It
// checks ctx every 65536 nodes and returns its error when cancelled;
// progress, when set, receives the fraction done.
func (g *Grid) Peaks(ctx context.Context, progress func(float64)) ([]Peak, error) {
	d := g.Dim
	step := 1
	weights := g.Weights
	if d >= 2 {
		step, weights = 2, g.HalfWeights
	}
	// The lattice: dims, strides and the full-grid index of each node.
	dims := make([]int, d)
	strides := make([]int, d)
	n := 1
	for k := d - 1; k >= 0; k-- {
		dims[k] = (g.N[k]-1)/step + 1
		strides[k] = n
		n *= dims[k]
	}
	// Sanitised values (NaN and +Inf count as -Inf), the weight and the
	// full-grid index of each lattice node, by an odometer over the axes.
	const every = 1 << 14
	val := make([]float64, n)
	w := make([]float64, n)
	fullIdx := make([]int32, n)
	ix := make([]int, d)
	for i := 0; i < n; i++ {
		if i%every == 0 {
			if progress != nil {
				progress(0)
			}
			if err := ctx.Err(); err != nil {
				return nil, err
			}
		}
		fi, wt := 0, 1.0
		for k, c := range ix {
			fi += c * step * g.Stride[k]
			wt *= weights[k][c*step]
		}
		v := g.LogP[fi]
		if math.IsNaN(v) || math.IsInf(v, 1) {
			v = math.Inf(-1)
		}
		val[i], w[i], fullIdx[i] = v, wt, int32(fi)
		for k := d - 1; k >= 0; k-- {
			ix[k]++
			if ix[k] < dims[k] {
				break
			}
			ix[k] = 0
		}
	}
	cur := make([]int32, n)
	nxt := make([]int32, n)
	for i := range cur {
		cur[i] = int32(i)
	}
	work, done := float64(d+1)*float64(n), 0.0
	check := func(i int) error {
		if progress != nil {
			progress(min(1, (done+float64(i))/work))
		}
		return ctx.Err()
	}
	// Argmax over the neighbourhood, one axis at a time: after the pass over
	// axis k, cur[i] is the best node within one step along axes 0..k. The
	// order is by value, then by index (a total order, so plateaus end in
	// one node).
	for k := 0; k < d; k++ {
		s := strides[k]
		nk := dims[k]
		block := s * nk
		for a := 0; a < n; a += block {
			if err := check(a); err != nil {
				return nil, err
			}
			for c := 0; c < nk; c++ {
				base := a + c*s
				for i := base; i < base+s; i++ {
					b := cur[i]
					vb := val[b]
					if c > 0 {
						if o := cur[i-s]; val[o] > vb || (val[o] == vb && o > b) {
							b, vb = o, val[o]
						}
					}
					if c < nk-1 {
						if o := cur[i+s]; val[o] > vb || (val[o] == vb && o > b) {
							b = o
						}
					}
					nxt[i] = b
				}
			}
		}
		cur, nxt = nxt, cur
		done += float64(n)
	}
	parent := cur
	floor := g.Max - 46
	masses := map[int32]float64{}
	total := 0.0
	for i := 0; i < n; i++ {
		if i%every == 0 {
			if err := check(i); err != nil {
				return nil, err
			}
		}
		v := val[i]
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
		m := w[i] * special.Exp(v-g.Max)
		masses[r] += m
		total += m
	}
	peaks := make([]Peak, 0, len(masses))
	for r, m := range masses {
		fi := int(fullIdx[r])
		x := make([]float64, d)
		g.Point(fi, x)
		peaks = append(peaks, Peak{Index: fi, Point: x, LogP: g.LogP[fi], Mass: m / total})
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
