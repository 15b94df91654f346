package quadrature

import (
	"math"
	"sync"
)

// The node map of an axis at one outer node. Where the conditional density
// has a tail that decays no faster than a Gaussian (algebraic, exponential
// or Gaussian), the map u = c + w sinh t turns it into one that decays
// exponentially or faster in t, and the trapezoid rule in t converges
// exponentially (Trefethen and Weideman 2014, section 14). Where a tail
// decays doubly exponentially (exp(-e^u): the side of a log-scale
// parameter towards its bound), the sinh map would make it triply
// exponential and narrow the strip where the integrand is analytic and
// bounded to nothing; there the plain trapezoid rule in u is the right one
// (its error falls like exp(-2 pi a / h) for a strip of half-width a), so
// the map is linear on that side: u = c + w t.

// offset returns u - c = w phi(t) with phi(t) = t + bR (e^t - 1 - t) -
// bL (e^-t - 1 + t): sinh t when both b are 1/2, t when both are 0, and
// linear on one side, exponential on the other in between.
func (lv *level) offset(t float64) float64 {
	ep, en := lv.expm1s(t)
	return lv.offsetWith(t, ep, en)
}

// jac returns du/dt at t.
func (lv *level) jac(t float64) float64 {
	ep, en := lv.expm1s(t)
	return lv.jacWith(ep, en)
}

// offsetAt and jacAt are offset and jac at the node t = j h of a rule of
// step h: from em, the table of that step, where it reaches j.
func (lv *level) offsetAt(j int, em *expm1Table) float64 {
	ep, en, ok := em.at(j)
	if !ok {
		return lv.offset(float64(j) * em.h)
	}
	return lv.offsetWith(float64(j)*em.h, ep, en)
}

func (lv *level) jacAt(j int, em *expm1Table) float64 {
	ep, en, ok := em.at(j)
	if !ok {
		return lv.jac(float64(j) * em.h)
	}
	return lv.jacWith(ep, en)
}

// expm1s returns expm1(t) and expm1(-t) where the map uses them (a side
// whose b is 0 takes neither: 0 there).
func (lv *level) expm1s(t float64) (ep, en float64) {
	if lv.betaR != 0 {
		ep = math.Expm1(t)
	}
	if lv.betaL != 0 {
		en = math.Expm1(-t)
	}
	return ep, en
}

// offsetWith is offset at t given ep = expm1(t) and en = expm1(-t).
func (lv *level) offsetWith(t, ep, en float64) float64 {
	phi := t
	if lv.betaR != 0 {
		phi += lv.betaR * (ep - t)
	}
	if lv.betaL != 0 {
		phi -= lv.betaL * (en + t)
	}
	return lv.w * phi
}

// jacWith is jac given ep = expm1(t) and en = expm1(-t).
func (lv *level) jacWith(ep, en float64) float64 {
	d := 1.0
	if lv.betaR != 0 {
		d += lv.betaR * ep
	}
	if lv.betaL != 0 {
		d += lv.betaL * en
	}
	return lv.w * d
}

// expm1Table holds expm1(j h) and expm1(-j h) for j = 0..n. The nodes of
// every line of a rule of step h sit at t = j h, and the node map's offset
// and Jacobian take both at each node: six calls of math.Expm1 a node
// without the table (a tenth of the 4-D clock example's analysis). The
// values are those math.Expm1 gives at t = float64(j) * h.
type expm1Table struct {
	h        float64
	pos, neg []float64
}

// at returns expm1(j h) and expm1(-j h), and false where j is beyond the
// table.
func (em *expm1Table) at(j int) (float64, float64, bool) {
	switch {
	case j >= 0 && j < len(em.pos):
		return em.pos[j], em.neg[j], true
	case j < 0 && -j < len(em.pos):
		return em.neg[-j], em.pos[-j], true
	}
	return 0, 0, false
}

// expm1Tables caches a table per step h (a handful of steps occur: the
// rules' h, 2h and 4h, the slices' 2h): immutable once stored.
var expm1Tables sync.Map

// expm1TableFor returns the table of step h for j = 0..n at least.
func expm1TableFor(h float64, n int) *expm1Table {
	if v, ok := expm1Tables.Load(h); ok {
		if em := v.(*expm1Table); len(em.pos) > n {
			return em
		}
	}
	em := &expm1Table{h: h, pos: make([]float64, n+1), neg: make([]float64, n+1)}
	for j := range em.pos {
		t := float64(j) * h
		em.pos[j], em.neg[j] = math.Expm1(t), math.Expm1(-t)
	}
	expm1Tables.Store(h, em)
	return em
}

// startIndex returns the index where a line's first block ends on the
// side sign: about 7 conditional standard deviations from the centre.
func (lv *level) startIndex(em *expm1Table, sign int) int {
	sd := lv.w / lv.width
	j := 1
	for ; j < 1000 && math.Abs(lv.offsetAt(sign*j, em)) < 7*sd; j++ {
	}
	return j
}

// Probe distances, in conditional standard deviations, and the ratio of
// log-density drops beyond which a side counts as doubly exponential (a
// Gaussian gives 4, an exponential tail 2, an algebraic one less).
const (
	probeR     = 4
	probeRatio = 8
	// linearWidth is w / sd of the linear map: a step of h = 0.25 is half
	// a standard deviation.
	linearWidth = 2
)

// chooseMap probes the conditional log-density along axis k at 4 and 8
// standard deviations on each side of the centre (the inner axes at their
// predicted modes), and makes the map linear when a side falls doubly
// exponentially. f0 is log p at the centre.
func (r *rule) chooseMap(k int, sd float64) {
	lv := &r.lv[k]
	if r.s.keepMaps && lv.chosen {
		// A slice: the map's shape chosen on the axis's first line
		// (through the centre) serves its other lines, rescaled.
		lv.width = r.s.Width
		if lv.betaL == 0 && lv.betaR == 0 {
			lv.width = linearWidth
		}
		lv.w = lv.width * sd
		return
	}
	lv.chosen = true
	lv.betaL, lv.betaR = 0.5, 0.5
	lv.w = r.s.Width * sd
	lv.width = r.s.Width
	copy(r.ut, lv.mode)
	r.toZ(r.ut)
	f0 := r.p.LogDensity(r.z)
	r.points++
	if math.IsNaN(f0) || math.IsInf(f0, 0) {
		return
	}
	drop := func(dist float64) float64 {
		copy(r.ut, lv.mode)
		r.ut[k] += dist
		for a := k + 1; a < r.d; a++ {
			r.ut[a] += lv.slope[a] * dist
		}
		r.toZ(r.ut)
		r.points++
		f := r.p.LogDensity(r.z)
		if math.IsNaN(f) {
			return math.Inf(1)
		}
		return f0 - f
	}
	for _, side := range [2]float64{1, -1} {
		d1 := drop(side * probeR * sd)
		if !(d1 > 0) {
			continue
		}
		d2 := drop(side * 2 * probeR * sd)
		if d2 > probeRatio*d1 {
			if side > 0 {
				lv.betaR = 0
			} else {
				lv.betaL = 0
			}
		}
	}
	if lv.betaL == 0 && lv.betaR == 0 {
		lv.w = linearWidth * sd
		lv.width = linearWidth
	}
}
