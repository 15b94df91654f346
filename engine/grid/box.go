package grid

import (
	"context"
	"errors"
	"math"

	"bellcheck/engine/target"
)

// BoxSettings are the settings of FindBox. Zero values mean the defaults.
type BoxSettings struct {
	// Bounds holds per axis the bounds the box must stay within: the
	// support (where finite) and any side the user set; +-Inf where free.
	Bounds Box
	// Pinned[k][0] and Pinned[k][1] fix the lower and upper face of axis k
	// at its bound (a side the user set): it is neither widened nor
	// trimmed. Nil means none.
	Pinned [][2]bool
	// Initial, when set, is the first box explored (clipped to Bounds).
	// Otherwise the support where finite, and [-2, 2] (or two units from a
	// finite bound) where not.
	Initial Box
	// Points are the points per axis of the fine grid that will use the
	// box (the edge test is scaled to its spacing); 0 means DefaultPoints.
	Points []int
	// Coarse is the number of points per axis of the exploration grids; 0
	// means 101, 31, 15 and 11 in 1 to 4 dimensions.
	Coarse int
	// EdgeTol is the largest share of the mass allowed in the outermost
	// layer of nodes at a free face of the fine grid; 0 means 1e-10.
	EdgeTol float64
	// WidthCap bounds the width of each axis in multiples of its
	// interquartile range (measured when the exploration resolves it); 0
	// means max(40, (Points-1)/2), so that the fine grid keeps two points
	// per interquartile range.
	WidthCap float64
	// MaxIter is the most exploration grids; 0 means 40.
	MaxIter int
	// Progress, when set, receives a fraction that rises towards 1.
	Progress func(fraction float64)
}

// BoxResult is what FindBox found.
type BoxResult struct {
	Box Box
	// Fixed[k][s] reports that face s (0 lower, 1 upper) of axis k lies on
	// a bound: of the support or pinned by the user.
	Fixed [][2]bool
	// Capped[k][s] reports a free face that still carried more than
	// EdgeTol of the mass when the width cap stopped its widening: the
	// density is improper or too heavy-tailed for a grid along that axis.
	Capped [][2]bool
	// Converged is false when MaxIter grids did not settle the box.
	Converged   bool
	Iterations  int
	Evaluations int
}

// ErrNoBox means no exploration grid found any mass.
var ErrNoBox = errors.New("grid: the density is zero or undefined everywhere the search looked")

func defaultCoarse(d int) int {
	switch d {
	case 1:
		return 101
	case 2:
		return 31
	case 3:
		return 15
	}
	return 11
}

// FindBox finds a box that holds all but a negligible share of the mass of
// p: it explores coarse grids, widening each free face whose outer layer
// carries more than EdgeTol of the mass (doubling the width on that side)
// and zooming in on the mass when it fills less than 60 % of an axis, until
// neither is needed. The final box is trimmed to the nodes whose layer holds
// more than EdgeTol, plus one node.
func FindBox(ctx context.Context, p target.Density, s BoxSettings) (BoxResult, error) {
	d := p.Dim()
	if len(s.Bounds.Lo) != d || len(s.Bounds.Hi) != d {
		return BoxResult{}, ErrBadBox
	}
	tol := s.EdgeTol
	if tol <= 0 {
		tol = 1e-10
	}
	nc := s.Coarse
	if nc <= 0 {
		nc = defaultCoarse(d)
	}
	nc = oddPoints(nc)
	maxIter := s.MaxIter
	if maxIter <= 0 {
		maxIter = 40
	}
	pinned := func(k, side int) bool { return k < len(s.Pinned) && s.Pinned[k][side] }
	nf := make([]int, d)
	widthCap := make([]float64, d)
	for k := 0; k < d; k++ {
		nf[k] = DefaultPoints(d)
		if k < len(s.Points) && s.Points[k] > 0 {
			nf[k] = s.Points[k]
		}
		nf[k] = oddPoints(nf[k])
		widthCap[k] = s.WidthCap
		if widthCap[k] <= 0 {
			widthCap[k] = math.Max(40, float64(nf[k]-1)/2)
		}
	}
	lo := append([]float64(nil), s.Bounds.Lo...)
	hi := append([]float64(nil), s.Bounds.Hi...)
	for k := 0; k < d; k++ {
		bl, bh := s.Bounds.Lo[k], s.Bounds.Hi[k]
		if math.IsNaN(bl) || math.IsNaN(bh) || !(bl < bh) {
			return BoxResult{}, ErrBadBox
		}
		if len(s.Initial.Lo) == d && len(s.Initial.Hi) == d && s.Initial.Lo[k] < s.Initial.Hi[k] {
			lo[k] = math.Max(s.Initial.Lo[k], bl)
			hi[k] = math.Min(s.Initial.Hi[k], bh)
			if pinned(k, 0) {
				lo[k] = bl
			}
			if pinned(k, 1) {
				hi[k] = bh
			}
			if lo[k] < hi[k] && !math.IsInf(lo[k], 0) && !math.IsInf(hi[k], 0) {
				continue
			}
		}
		switch {
		case !math.IsInf(bl, 0) && !math.IsInf(bh, 0):
			lo[k], hi[k] = bl, bh
		case !math.IsInf(bl, 0):
			lo[k], hi[k] = bl, bl+math.Max(2, 2*math.Abs(bl))
		case !math.IsInf(bh, 0):
			lo[k], hi[k] = bh-math.Max(2, 2*math.Abs(bh)), bh
		default:
			lo[k], hi[k] = -2, 2
		}
	}
	res := BoxResult{Fixed: make([][2]bool, d), Capped: make([][2]bool, d)}
	atBound := func(k, side int) bool {
		if pinned(k, side) {
			return true
		}
		if side == 0 {
			return lo[k] <= s.Bounds.Lo[k]
		}
		return hi[k] >= s.Bounds.Hi[k]
	}
	coreIQR := make([]float64, d)
	for k := range coreIQR {
		coreIQR[k] = math.Inf(1)
	}
	points := make([]int, d)
	for k := range points {
		points[k] = nc
	}
	report := func() {
		if s.Progress != nil {
			s.Progress(1 - math.Pow(0.8, float64(res.Iterations)))
		}
	}
	var trimLo, trimHi []float64
	// A face doubles its distance at most maxGrow times after mass is
	// first seen (a factor of about 1.7e7): beyond that the density is
	// taken to be improper along that axis.
	const maxGrow = 24
	grows := make([][2]int, d)
	found := false
	for res.Iterations = 1; res.Iterations <= maxIter; res.Iterations++ {
		if err := ctx.Err(); err != nil {
			return res, err
		}
		g, err := Evaluate(ctx, p, Box{Lo: lo, Hi: hi}, Settings{Points: points})
		if g != nil {
			res.Evaluations += g.Size()
		} else if err == ErrNoMass {
			res.Evaluations += pow(nc, d)
		}
		report()
		if err == ErrNoMass {
			// Nothing seen yet: widen every free face.
			grown := false
			for k := 0; k < d; k++ {
				w := hi[k] - lo[k]
				if !atBound(k, 0) {
					lo[k] = math.Max(lo[k]-w, s.Bounds.Lo[k])
					grown = true
				}
				if !atBound(k, 1) {
					hi[k] = math.Min(hi[k]+w, s.Bounds.Hi[k])
					grown = true
				}
				if hi[k]-lo[k] > 1e300 || math.IsInf(lo[k], 0) || math.IsInf(hi[k], 0) {
					return res, ErrNoBox
				}
			}
			if !grown {
				return res, ErrNoBox
			}
			continue
		}
		if err != nil {
			return res, err
		}
		found = true
		st := &g.Stats
		widened := false
		for k := 0; k < d; k++ {
			hc := g.Spacing(k)
			ratio := float64(nc-1) / float64(nf[k]-1)
			// The interquartile range, where the grid resolves it.
			iqr := quantile(g.Nodes[k][0], hc, st.Marginals[k].Density, 0.75) -
				quantile(g.Nodes[k][0], hc, st.Marginals[k].Density, 0.25)
			// Only a range well inside the box describes the core: a
			// density still cut off by the box has an IQR of the box's
			// order.
			if iqr >= 4*hc && iqr <= (hi[k]-lo[k])/8 && iqr < coreIQR[k] {
				coreIQR[k] = iqr
			}
			w := hi[k] - lo[k]
			maxW := widthCap[k] * coreIQR[k]
			for side := 0; side < 2; side++ {
				if atBound(k, side) || st.EdgeMass[k][side]*ratio <= tol {
					continue
				}
				step := w
				if w+step > maxW {
					step = maxW - w
				}
				grows[k][side]++
				if step <= 0.01*w || grows[k][side] > maxGrow {
					res.Capped[k][side] = true
					continue
				}
				if side == 0 {
					lo[k] = math.Max(lo[k]-step, s.Bounds.Lo[k])
				} else {
					hi[k] = math.Min(hi[k]+step, s.Bounds.Hi[k])
				}
				widened = true
			}
		}
		if widened {
			continue
		}
		// Zoom in where the mass fills a small part of an axis.
		zoomed := false
		trimLo, trimHi = append(trimLo[:0], lo...), append(trimHi[:0], hi...)
		for k := 0; k < d; k++ {
			ratio := float64(nc-1) / float64(nf[k]-1)
			mass := st.Marginals[k].Mass
			ia, ib := -1, -1
			for i, m := range mass {
				if m*ratio > tol {
					if ia < 0 {
						ia = i
					}
					ib = i
				}
			}
			if ia < 0 {
				continue
			}
			nl, nh := lo[k], hi[k]
			if !pinned(k, 0) && !res.Capped[k][0] {
				nl = g.Nodes[k][max(ia-1, 0)]
			}
			if !pinned(k, 1) && !res.Capped[k][1] {
				nh = g.Nodes[k][min(ib+1, nc-1)]
			}
			if nh-nl < 0.6*(hi[k]-lo[k]) {
				lo[k], hi[k] = nl, nh
				zoomed = true
			}
			trimLo[k], trimHi[k] = nl, nh
		}
		if zoomed {
			continue
		}
		res.Converged = true
		lo, hi = trimLo, trimHi
		break
	}
	if !found {
		return res, ErrNoBox
	}
	if res.Iterations > maxIter {
		res.Iterations = maxIter
	}
	res.Box = Box{Lo: lo, Hi: hi}
	for k := 0; k < d; k++ {
		res.Fixed[k] = [2]bool{atBound(k, 0), atBound(k, 1)}
	}
	return res, nil
}

func pow(n, d int) int {
	r := 1
	for i := 0; i < d; i++ {
		r *= n
	}
	return r
}
