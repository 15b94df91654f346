package quadrature

import (
	"fmt"
	"math"

	"bellcheck/engine/special"
)

// lineChunk is the number of nodes added at a time when a line is extended.
const lineChunk = 2

// line integrates the innermost axis at the current outer point: it
// evaluates the nodes of the map u = c + w sinh(t), t = jh, over a range
// that grows until both ends pass endCheck, in blocks.
func (r *rule) line() error {
	d := r.d
	k := d - 1
	lv := &r.lv[k]
	// The other coordinates are fixed along the line.
	r.u[k] = 0
	r.toZ(r.u)
	base := r.v[k]
	lkk := r.L[k*d+k]
	off := r.maxJ
	jl, jr := -min(lv.startIndex(r.em, -1), r.maxJ), min(lv.startIndex(r.em, 1), r.maxJ)
	if err := r.evalRange(jl, jr, base, lkk); err != nil {
		return err
	}
	nl := 5
	cur, prev, peak := lv.cur[:nl], lv.prev[:nl], lv.peak[:nl]
	clear(peak)
	for j := jl; j <= jr; j++ {
		r.lineWatch(j, base, lkk, cur)
		raisePeak(peak, cur)
	}
	for _, side := range [2]int{1, -1} {
		for {
			end := jr
			if side < 0 {
				end = jl
			}
			r.lineWatch(end, base, lkk, cur)
			r.lineWatch(end-side, base, lkk, prev)
			stop, remZ := r.endCheck(k, cur, prev, peak, math.Abs(float64(end)*r.h), false)
			if stop {
				r.recordOthers(k, remZ)
				break
			}
			a, b := end+side, end+side*lineChunk
			if side < 0 {
				a, b = max(b, -r.maxJ), a
				jl = a
			} else {
				b = min(b, r.maxJ)
				jr = b
			}
			if err := r.evalRange(a, b, base, lkk); err != nil {
				return err
			}
			for j := a; j <= b; j++ {
				r.lineWatch(j, base, lkk, cur)
				raisePeak(peak, cur)
			}
		}
	}
	// Undefined nodes next to a share of the line's mass: an edge of the
	// density that the rule does not resolve.
	top := 0.0
	for j := jl; j <= jr; j++ {
		if g := r.lineG[j+off]; g > top {
			top = g
		}
	}
	for j := jl; j <= jr; j++ {
		if !r.lineBad[j+off] {
			continue
		}
		r.lineBad[j+off] = false
		for _, nb := range [2]int{j - 1, j + 1} {
			if nb >= jl && nb <= jr && r.lineG[nb+off] > 1e-8*top {
				r.nearNaN++
				break
			}
		}
	}
	// The sums of the three rules, and the nodes.
	for t := range r.ls {
		r.ls[t].reset()
	}
	m, xm, mp := r.m[k], r.xm[k], r.maps[k]
	for j := jl; j <= jr; j++ {
		g := r.lineG[j+off]
		if g == 0 {
			continue
		}
		vk := base + lkk*r.lineT[j+off]
		y := vk - m
		x := mp.ToOriginal(vk) - xm
		r.ls[0].add(g, y, x)
		if j%2 == 0 {
			r.ls[1].add(2*g, y, x)
			if j%4 == 0 {
				r.ls[2].add(4*g, y, x)
			}
		}
		r.v[k] = vk
		r.z[r.perm[k]] = vk
		if !r.noNodes {
			r.nodes.add(r.z, lv.logW+math.Log(r.h*lv.jacAt(j, r.em)), r.lineLogP[j+off], min(lv.tier, tierOf(j)))
		}
	}
	for t := range r.ls {
		r.lay.expand(&r.ls[t], r.y, r.x, 1, lv.sum[t])
	}
	if r.keepWalks && k > 0 {
		r.recordWalk(k, r.lineG[jl+off:jr+1+off], jl, 1/r.h)
	}
	if *r.s.lines++; r.s.Tick != nil && *r.s.lines%tickLines == 0 {
		r.s.Tick()
	}
	return nil
}

// tickLines is the number of lines between two calls of Settings.Tick: a
// line is a few dozen evaluations of log p.
const tickLines = 8

// evalRange evaluates the line's nodes a..b in one block, writing u into
// lineT, log p into lineLogP and the weighted share exp(log p - ref) h w
// cosh t into lineG.
func (r *rule) evalRange(a, b int, base, lkk float64) error {
	d := r.d
	k := d - 1
	lv := &r.lv[k]
	off := r.maxJ
	n := b - a + 1
	if r.points+n > r.s.MaxPoints {
		return fmt.Errorf("%w: more than %d", ErrTooLarge, r.s.MaxPoints)
	}
	for i := range r.cols {
		r.cols[i] = r.cols[i][:cap(r.cols[i])]
	}
	for ax := 0; ax < k; ax++ {
		c := r.cols[r.perm[ax]][:n]
		v := r.v[ax]
		for i := range c {
			c[i] = v
		}
	}
	ck := r.cols[r.perm[k]][:n]
	for i := range ck {
		u := lv.c + lv.offsetAt(a+i, r.em)
		r.lineT[a+i+off] = u
		ck[i] = base + lkk*u
	}
	for i := range r.cols {
		r.cols[i] = r.cols[i][:n]
	}
	out := r.lineLogP[a+off : b+1+off]
	r.p.LogDensityBlock(r.cols, out)
	r.points += n
	for i, lp := range out {
		g := 0.0
		switch {
		case math.IsNaN(lp) || math.IsInf(lp, 1):
			r.nonFinite++
			out[i] = math.Inf(-1)
			r.lineBad[a+i+off] = true
		case !math.IsInf(lp, -1):
			g = special.Exp(lp-r.ref) * r.h * lv.jacAt(a+i, r.em)
			if lp > r.top {
				r.top = lp
			}
		}
		r.lineG[a+i+off] = g
		if g != 0 {
			r.lineBad[a+i+off] = false
		}
	}
	return nil
}

// lineWatch writes the watched components of the line's node j (the
// density and the powers of the line's axis).
func (r *rule) lineWatch(j int, base, lkk float64, w []float64) {
	k := r.d - 1
	off := r.maxJ
	g := r.lineG[j+off]
	if g == 0 {
		clear(w)
		return
	}
	vk := base + lkk*r.lineT[j+off]
	y := vk - r.m[k]
	x := r.maps[k].ToOriginal(vk) - r.xm[k]
	y2, x2 := y*y, x*x
	w[0] = g
	w[1] = g * y2
	w[2] = g * y2 * y2
	w[3] = g * x2
	w[4] = g * x2 * x2
}

// raisePeak raises each peak to the share in cur where that is larger. A
// comparison, not the builtin max: under WebAssembly max is a call of the
// runtime's (it orders NaN and signed zeros), here once a component a node;
// the shares are never NaN (an undefined node's share is 0).
func raisePeak(peak, cur []float64) {
	for i, c := range cur {
		if c > peak[i] {
			peak[i] = c
		}
	}
}
