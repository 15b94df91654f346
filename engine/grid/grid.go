package grid

import (
	"context"
	"errors"
	"fmt"
	"math"
	"sync"
	"time"

	"bellcheck/engine/target"
	"bellcheck/engine/transform"
)

// Box is the axis-aligned box [Lo[k], Hi[k]] for k < len(Lo).
type Box struct {
	Lo, Hi []float64
}

// Clone returns a deep copy of b.
func (b Box) Clone() Box {
	return Box{Lo: append([]float64(nil), b.Lo...), Hi: append([]float64(nil), b.Hi...)}
}

// Errors of the grid.
var (
	// ErrBadBox means a box that is empty, not finite or of the wrong dimension.
	ErrBadBox = errors.New("grid: bad box")
	// ErrNoMass means log p is -Inf or not finite at every point of the grid.
	ErrNoMass = errors.New("grid: the density is zero or undefined everywhere on the grid")
	// ErrTooLarge means a grid of more points than MaxPoints.
	ErrTooLarge = errors.New("grid: too many points")
)

// MaxPoints bounds the number of grid points (about 64 MB of values).
const MaxPoints = 8 << 20

// Settings of Evaluate. The zero value means the defaults.
type Settings struct {
	// Points per axis; 0 or a missing entry means DefaultPoints(d). Each
	// is raised to MinPoints and made odd (the half-resolution rule needs
	// both end points).
	Points []int
	// Maps, when set, give per axis the original scale x(z) for the Orig
	// statistics; nil means the identity for every axis.
	Maps []transform.Map
	// Free tells per axis whether the lower and upper faces are free:
	// neither a bound of the support nor a side fixed by the user. Tail
	// shares are measured at free faces only. Nil means all free.
	Free [][2]bool
	// Progress, when set, receives the fraction done (0 to 1) between
	// blocks of points.
	Progress func(fraction float64)
	// BlockSize is the number of points per LogDensityBlock call; 0 means
	// 1024 (small enough that progress reports keep coming for a costly
	// density, large enough to amortise the call).
	BlockSize int
	// marginalsOnly has the summary hold the log Z and the marginals
	// alone (no moments, error estimates, tail shares or original-scale
	// mode): the box search's exploration grids, which read only their
	// marginals.
	marginalsOnly bool
}

// Grid is a density evaluated on a tensor grid, with its summary.
type Grid struct {
	Dim int
	Box Box
	// N[k] is the number of nodes along axis k, Nodes[k] their coordinates,
	// Weights[k] the quadrature weights and HalfWeights[k] those of the
	// half-resolution rule (zero on odd nodes).
	N           []int
	Nodes       [][]float64
	Weights     [][]float64
	HalfWeights [][]float64
	// Stride[k] is the distance in LogP between neighbours along axis k;
	// the last axis varies fastest.
	Stride []int
	// LogP holds log p at every node; Max is its largest finite value, at
	// node ArgMax.
	LogP   []float64
	Max    float64
	ArgMax int
	// NonFinite counts the nodes where log p is NaN or +Inf: they are left
	// out of every sum.
	NonFinite int
	// Maps are the original-scale maps (identity when none were given).
	Maps []transform.Map
	// Stats is the summary of the density on the grid.
	Stats Stats
}

// Size returns the number of nodes.
func (g *Grid) Size() int { return len(g.LogP) }

// Point writes the coordinates of node idx into x (len Dim).
func (g *Grid) Point(idx int, x []float64) {
	for k := 0; k < g.Dim; k++ {
		i := idx / g.Stride[k]
		idx -= i * g.Stride[k]
		x[k] = g.Nodes[k][i]
	}
}

// Index returns the per-axis indices of node idx.
func (g *Grid) Index(idx int, ix []int) {
	for k := 0; k < g.Dim; k++ {
		i := idx / g.Stride[k]
		idx -= i * g.Stride[k]
		ix[k] = i
	}
}

// Spacing returns the node spacing along axis k.
func (g *Grid) Spacing(k int) float64 { return g.Nodes[k][1] - g.Nodes[k][0] }

// newGrid lays out the nodes and weights of a grid over box.
func newGrid(d int, box Box, points []int, maps []transform.Map) (*Grid, error) {
	if len(box.Lo) != d || len(box.Hi) != d {
		return nil, fmt.Errorf("%w: %d bounds for %d parameters", ErrBadBox, len(box.Lo), d)
	}
	g := &Grid{Dim: d, Box: box.Clone()}
	total := 1
	for k := 0; k < d; k++ {
		lo, hi := box.Lo[k], box.Hi[k]
		if !(lo < hi) || math.IsInf(lo, 0) || math.IsInf(hi, 0) {
			return nil, fmt.Errorf("%w: axis %d is [%g, %g]", ErrBadBox, k+1, lo, hi)
		}
		n := 0
		if k < len(points) {
			n = points[k]
		}
		if n <= 0 {
			n = DefaultPoints(d)
		}
		n = oddPoints(n)
		h := (hi - lo) / float64(n-1)
		if !(h > 0) || lo+h == lo {
			return nil, fmt.Errorf("%w: axis %d is too narrow for %d points: [%g, %g]", ErrBadBox, k+1, n, lo, hi)
		}
		nodes := make([]float64, n)
		for i := range nodes {
			nodes[i] = lo + float64(i)*h
		}
		nodes[n-1] = hi
		g.N = append(g.N, n)
		g.Nodes = append(g.Nodes, nodes)
		g.Weights = append(g.Weights, gregoryWeights(n, h))
		g.HalfWeights = append(g.HalfWeights, halfWeights(n, h))
		total *= n
		if total > MaxPoints {
			return nil, fmt.Errorf("%w: more than %d", ErrTooLarge, MaxPoints)
		}
	}
	g.Stride = make([]int, d)
	s := 1
	for k := d - 1; k >= 0; k-- {
		g.Stride[k] = s
		s *= g.N[k]
	}
	g.Maps = make([]transform.Map, d)
	for k := range g.Maps {
		g.Maps[k] = transform.Map{Scale: transform.Identity, Lo: math.Inf(-1), Hi: math.Inf(1)}
		if k < len(maps) {
			g.Maps[k] = maps[k]
		}
	}
	g.LogP = takeFloats(total) // evaluate writes every point
	return g, nil
}

// Evaluate evaluates p on a tensor grid over box and summarises it. It
// checks ctx between blocks of points and returns ctx's error when
// cancelled.
func Evaluate(ctx context.Context, p target.Density, box Box, s Settings) (*Grid, error) {
	d := p.Dim()
	g, err := newGrid(d, box, s.Points, s.Maps)
	if err != nil {
		return nil, err
	}
	const evalShare = 0.8 // of the progress fraction
	report := func(f float64) {
		if s.Progress != nil {
			s.Progress(f)
		}
	}
	if err := g.evaluate(ctx, p, s.BlockSize, func(f float64) { report(evalShare * f) }); err != nil {
		return nil, err
	}
	summarise := g.summarise
	if s.marginalsOnly {
		summarise = g.summariseMarginals
	}
	if err := summarise(ctx, s.Free, func(f float64) { report(evalShare + (1-evalShare)*f) }); err != nil {
		return nil, err
	}
	report(1)
	return g, nil
}

// The first call of the density takes chunkProbe points; the calls that
// follow take as many as the time of the last one says fit in chunkAim (up
// to the whole block).
const (
	chunkProbe = 16
	chunkAim   = 4 * time.Millisecond
)

// floatPool recycles the grids' large arrays: evaluate's block of
// coordinates, and the log-densities and pair sums of the grids the box
// search explores and releases. Memory used again costs neither the
// collector's work nor fresh pages.
var floatPool sync.Pool // of *[]float64

// takeFloats returns a slice of n floats (not zeroed), recycled where the
// pool has one large enough.
func takeFloats(n int) []float64 {
	if b, ok := floatPool.Get().(*[]float64); ok && cap(*b) >= n {
		return (*b)[:n]
	}
	return make([]float64, n)
}

// releaseFloats hands b back to the pool: nothing may use it after.
func releaseFloats(b []float64) { floatPool.Put(&b) }

// release hands the grid's large arrays (its log-densities and pair sums)
// back to the pool; the grid must not be used after it. The box search
// releases each exploration grid once it has read its marginals.
func (g *Grid) release() {
	if g == nil {
		return
	}
	releaseFloats(g.LogP)
	for _, ps := range g.Stats.pairSums {
		releaseFloats(ps)
	}
	g.LogP, g.Stats.pairSums = nil, nil
}

// evaluate fills LogP by blocks of whole lines along the last axis.
func (g *Grid) evaluate(ctx context.Context, p target.Density, blockSize int, progress func(float64)) error {
	d := g.Dim
	if blockSize <= 0 {
		blockSize = 1024
	}
	nLast := g.N[d-1]
	linesPerBlock := blockSize / nLast
	if linesPerBlock < 1 {
		linesPerBlock = 1
	}
	nLines := len(g.LogP) / nLast
	bufLen := linesPerBlock * nLast
	buf := takeFloats(d * bufLen)
	defer releaseFloats(buf)
	cols := make([][]float64, d)
	sub := make([][]float64, d)
	chunk := min(bufLen, chunkProbe) // until the first call has been timed
	ix := make([]int, d)
	g.Max = math.Inf(-1)
	g.ArgMax = -1
	for line0 := 0; line0 < nLines; line0 += linesPerBlock {
		if err := ctx.Err(); err != nil {
			return err
		}
		lines := min(linesPerBlock, nLines-line0)
		n := lines * nLast
		for k := range cols {
			cols[k] = buf[k*bufLen : k*bufLen+n]
		}
		for l := 0; l < lines; l++ {
			g.Index((line0+l)*nLast, ix)
			for k := 0; k < d-1; k++ {
				v := g.Nodes[k][ix[k]]
				c := cols[k][l*nLast : (l+1)*nLast]
				for i := range c {
					c[i] = v
				}
			}
			copy(cols[d-1][l*nLast:(l+1)*nLast], g.Nodes[d-1])
		}
		out := g.LogP[line0*nLast : line0*nLast+n]
		// Call the density on chunks of the block, fewer points where it
		// is costly (a long data vector it cannot reduce), so that the
		// context and the progress are looked at every few milliseconds.
		for a, b := 0, 0; a < n; a = b {
			b = min(a+chunk, n)
			for k := range cols {
				sub[k] = cols[k][a:b]
			}
			t0 := time.Now()
			p.LogDensityBlock(sub, out[a:b])
			chunk = bufLen
			if el := time.Since(t0); el > 0 {
				chunk = int(min(max(1, float64(b-a)*float64(chunkAim)/float64(el)), float64(bufLen)))
			}
			if b < n {
				if err := ctx.Err(); err != nil {
					return err
				}
				progress((float64(line0) + float64(b)/float64(nLast)) / float64(nLines))
			}
		}
		for i, v := range out {
			switch {
			case math.IsNaN(v) || math.IsInf(v, 1):
				g.NonFinite++
			case v > g.Max:
				g.Max = v
				g.ArgMax = line0*nLast + i
			}
		}
		progress(float64(line0+lines) / float64(nLines))
	}
	if g.ArgMax < 0 {
		return ErrNoMass
	}
	return nil
}
