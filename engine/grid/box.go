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
	// Reach, when set, holds per axis how far a free face may be widened
	// (within Bounds): on a fitting scale such as log x, the coordinates
	// beyond which x rounds onto its bound. A face stopped there with mass
	// still at it is Capped, as by the width cap. Nil means no limit.
	Reach Box
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
	// means max(12, (Points-1)/4), so that the fine grid keeps four points
	// per interquartile range where it can (12 interquartile ranges, 16
	// sd of a normal, hold a normal's mass to 1e-10 at every face).
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
		tol = 1e-12
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
	b := &boxSearch{s: s, nc: nc, tol: tol}
	pinned := b.pinned
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
			widthCap[k] = max(12, float64(nf[k]-1)/4)
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
			lo[k] = max(s.Initial.Lo[k], bl)
			hi[k] = min(s.Initial.Hi[k], bh)
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
			lo[k], hi[k] = bl, bl+max(2, 2*math.Abs(bl))
		case !math.IsInf(bh, 0):
			lo[k], hi[k] = bh-max(2, 2*math.Abs(bh)), bh
		default:
			lo[k], hi[k] = -2, 2
		}
	}
	res := BoxResult{Fixed: make([][2]bool, d), Capped: make([][2]bool, d)}
	b.lo, b.hi, b.res = lo, hi, &res
	atBound := b.atBound
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
	grows := make([][2]int, d)
	b.nf, b.widthCap, b.coreIQR, b.grows = nf, widthCap, coreIQR, grows
	found := false
	var last *Grid
	defer func() { last.release() }()
	for res.Iterations = 1; res.Iterations <= maxIter; res.Iterations++ {
		if err := ctx.Err(); err != nil {
			return res, err
		}
		f0 := 1 - math.Pow(0.8, float64(res.Iterations-1))
		last.release() // the previous exploration grid: read, and done with
		g, err := Evaluate(ctx, p, Box{Lo: lo, Hi: hi}, Settings{Points: points, marginalsOnly: true, Progress: func(f float64) {
			if s.Progress != nil {
				s.Progress(f0 + 0.2*(1-f0)*f) // towards the next iteration's value
			}
		}})
		last = g
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
					lo[k] = max(lo[k]-w, s.Bounds.Lo[k])
					grown = true
				}
				if !atBound(k, 1) {
					hi[k] = min(hi[k]+w, s.Bounds.Hi[k])
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
		changed := false
		var finalLo, finalHi []float64
		finalLo, finalHi = append(finalLo, lo...), append(finalHi, hi...)
		for k := 0; k < d; k++ {
			if b.faces(k, g, finalLo, finalHi) {
				changed = true
			}
		}
		if changed {
			continue
		}
		res.Converged = true
		copy(lo, finalLo)
		copy(hi, finalHi)
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

// A face doubles its distance at most maxGrow times after mass is first
// seen (a factor of about 1.7e7): beyond that the density is taken to be
// improper along that axis.
const maxGrow = 24

// boxSearch is FindBox's state between its exploration grids: the box, the
// settings and what each axis has seen. The per-axis work is its method
// faces, apart from FindBox: as one function they were 21.8 KB of
// app.wasm's code, which the browser's optimising compiler took about 0.3 s
// over (DEVELOPERS.md).
type boxSearch struct {
	s                 BoxSettings
	nc                int
	tol               float64
	nf                []int
	lo, hi            []float64
	res               *BoxResult
	widthCap, coreIQR []float64
	grows             [][2]int
}

// pinned reports whether side (0 low, 1 high) of axis k is pinned to its
// bound.
func (b *boxSearch) pinned(k, side int) bool { return k < len(b.s.Pinned) && b.s.Pinned[k][side] }

// atBound reports whether side of axis k is at its bound (or pinned).
func (b *boxSearch) atBound(k, side int) bool {
	if b.pinned(k, side) {
		return true
	}
	if side == 0 {
		return b.lo[k] <= b.s.Bounds.Lo[k]
	}
	return b.hi[k] >= b.s.Bounds.Hi[k]
}

// faces moves axis k's faces after the exploration grid g: outwards where
// g's marginal has mass at a face, inwards where the mass fills a small
// part of the axis (the faces it would settle at go in finalLo and
// finalHi). It reports whether the box changed.
func (b *boxSearch) faces(k int, g *Grid, finalLo, finalHi []float64) bool {
	s, nc, tol, lo, hi, res := b.s, b.nc, b.tol, b.lo, b.hi, b.res
	nf, widthCap, coreIQR, grows := b.nf, b.widthCap, b.coreIQR, b.grows
	atBound, pinned := b.atBound, b.pinned
	d := len(lo)
	st := &g.Stats
	hc := g.Spacing(k)
	w := hi[k] - lo[k]
	hf := w / float64(nf[k]-1)
	// The interquartile range, where the grid resolves it. Only a
	// range well inside the box describes the core: a density
	// still cut off by the box has an IQR of the box's order.
	iqr := quantile(g.Nodes[k][0], hc, st.Marginals[k].Density, 0.75) -
		quantile(g.Nodes[k][0], hc, st.Marginals[k].Density, 0.25)
	if iqr >= 4*hc && iqr <= w/8 && iqr < coreIQR[k] {
		coreIQR[k] = iqr
	}
	maxW := widthCap[k] * coreIQR[k]
	dens := st.Marginals[k].Density
	z := g.Nodes[k]
	// layer is the share of the mass in the fine grid's outer
	// layer if its face were at node i.
	layer := func(i int) float64 { return dens[i] * hf * 3 / 8 }
	var tgt [2]float64
	widen := [2]bool{}
	for side := 0; side < 2; side++ {
		face := 0
		dir := -1.0 // outwards
		if side == 1 {
			face, dir = nc-1, 1
		}
		cur := z[face]
		tgt[side] = cur
		if atBound(k, side) {
			continue
		}
		ext, extOK := 0.0, false
		if iqr >= 4*hc {
			// Only a resolved marginal has a tail to extend.
			ext, extOK = extrapolateFace(dens, z, side, hf, tol)
		}
		if layer(face) > tol {
			// Mass at the face: double the width on this side, or
			// go to the extrapolated face where that is farther
			// (up to four times the width).
			step := w
			if extOK && dir*(ext-cur) > step {
				step = min(dir*(ext-cur), 4*w)
			}
			tgt[side] = cur + dir*step
			widen[side] = true
			continue
		}
		// The node beyond the outermost one above the tolerance.
		out := face
		for i := range z {
			j := i
			if side == 1 {
				j = nc - 1 - i
			}
			if layer(j) > tol {
				out = j
				break
			}
		}
		out = min(max(out+int(dir), 0), nc-1)
		t := z[out]
		if extOK && dir*(ext-t) > 0 {
			t = ext
		}
		tgt[side] = t
		if dir*(t-cur) > hc {
			widen[side] = true
		}
	}
	// Cap the widening: the width may not pass maxW; what growth is
	// left is shared by the widening sides in proportion to what
	// they asked for.
	want := [2]float64{}
	for side := 0; side < 2; side++ {
		if widen[side] {
			grows[k][side]++
			want[side] = math.Abs(tgt[side] - [2]float64{lo[k], hi[k]}[side])
		}
	}
	if room := maxW - w; want[0]+want[1] > room {
		scale := max(room, 0) / (want[0] + want[1])
		want[0] *= scale
		want[1] *= scale
	}
	if len(s.Reach.Lo) == d && len(s.Reach.Hi) == d {
		want[0] = min(want[0], max(lo[k]-s.Reach.Lo[k], 0))
		want[1] = min(want[1], max(s.Reach.Hi[k]-hi[k], 0))
	}
	for side := 0; side < 2; side++ {
		if !widen[side] {
			continue
		}
		if want[side] <= 0.01*w || grows[k][side] > maxGrow {
			if layer([2]int{0, nc - 1}[side]) > tol {
				res.Capped[k][side] = true
			}
			widen[side] = false
			tgt[side] = [2]float64{lo[k], hi[k]}[side]
			continue
		}
		if side == 0 {
			tgt[0] = lo[k] - want[0]
		} else {
			tgt[1] = hi[k] + want[1]
		}
	}
	if widen[0] || widen[1] {
		if widen[0] {
			lo[k] = max(tgt[0], s.Bounds.Lo[k])
		}
		if widen[1] {
			hi[k] = min(tgt[1], s.Bounds.Hi[k])
		}
		return true
	}
	nl, nh := tgt[0], tgt[1]
	if pinned(k, 0) || res.Capped[k][0] {
		nl = lo[k]
	}
	if pinned(k, 1) || res.Capped[k][1] {
		nh = hi[k]
	}
	if !layable(nl, nh, max(nc, nf[k])) {
		// Too narrow for the grids to lay their nodes (the mass
		// piles up where log p overflows): keep the box.
		nl, nh = lo[k], hi[k]
	}
	finalLo[k], finalHi[k] = nl, nh
	if nh-nl < 0.6*w {
		// Zoom in: the mass fills a small part of the axis.
		lo[k], hi[k] = nl, nh
		return true
	}
	return false
}

// layable reports whether n equally spaced nodes fit on [lo, hi] in
// floating point with room to spare (spacing above 1e-9 of the magnitude).
func layable(lo, hi float64, n int) bool {
	h := (hi - lo) / float64(n-1)
	return h > 1e-9*max(math.Abs(lo), math.Abs(hi)) && lo+h > lo
}

func pow(n, d int) int {
	r := 1
	for i := 0; i < d; i++ {
		r *= n
	}
	return r
}

// extrapolateFace predicts where the fine grid's outer layer would hold
// tol of the mass on one side of a marginal density sampled at nodes z:
// it fits log density linearly (least squares) over the tail nodes that
// are still well sampled (density times spacing at least 1e-7, tail mass
// up to 5 %), and extends that exponential decay from the outermost of
// them. For a Gaussian tail the fit's slope is below the local one further
// out, so the prediction errs wide. ok is false without three such nodes or
// a decaying fit.
func extrapolateFace(dens, z []float64, side int, hf, tol float64) (face float64, ok bool) {
	n := len(dens)
	h := z[1] - z[0]
	at := func(i int) int {
		if side == 1 {
			return n - 1 - i
		}
		return i
	}
	start := -1
	for i := 0; i < n; i++ {
		if dens[at(i)]*h >= 1e-7 {
			start = i
			break
		}
	}
	if start < 0 {
		return 0, false
	}
	if start > 0 && dens[at(start-1)] == 0 {
		// A hard edge (the density is zero beyond): nothing to extend.
		return 0, false
	}
	// Distances inwards from the outermost reliable node.
	var su, sv, suu, suv, cnt, tail float64
	for i := start; i < n; i++ {
		j := at(i)
		if dens[j] <= 0 {
			break
		}
		tail += dens[j] * h
		if tail > 0.05 && cnt >= 3 {
			break
		}
		u := float64(i-start) * h
		v := math.Log(dens[j])
		su += u
		sv += v
		suu += u * u
		suv += u * v
		cnt++
	}
	if cnt < 3 {
		return 0, false
	}
	den := cnt*suu - su*su
	if den <= 0 {
		return 0, false
	}
	slope := (cnt*suv - su*sv) / den // d log density / d (distance inwards)
	if !(slope > 0) {
		return 0, false
	}
	edge := dens[at(start)] * hf * 3 / 8
	dist := 0.0
	if edge > tol {
		dist = math.Log(edge/tol) / slope
	}
	if side == 1 {
		return z[at(start)] + dist, true
	}
	return z[at(start)] - dist, true
}
