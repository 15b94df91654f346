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

// nodeMap is the shape of a node map, u = c + w phi(t): its half-width w
// (width conditional sds) and the weights of its exponential sides (see
// offset).
type nodeMap struct {
	w, width     float64
	betaL, betaR float64
}

// offset returns u - c = w phi(t) with phi(t) = t + bR (e^t - 1 - t) -
// bL (e^-t - 1 + t): sinh t when both b are 1/2, t when both are 0, and
// linear on one side, exponential on the other in between.
func (lv *nodeMap) offset(t float64) float64 {
	ep, en := lv.expm1s(t)
	return lv.offsetWith(t, ep, en)
}

// jac returns du/dt at t.
func (lv *nodeMap) jac(t float64) float64 {
	ep, en := lv.expm1s(t)
	return lv.jacWith(ep, en)
}

// offsetAt and jacAt are offset and jac at the node t = j h of a rule of
// step h: from em, the table of that step, where it reaches j.
func (lv *nodeMap) offsetAt(j int, em *expm1Table) float64 {
	ep, en, ok := em.at(j)
	if !ok {
		return lv.offset(float64(j) * em.h)
	}
	return lv.offsetWith(float64(j)*em.h, ep, en)
}

func (lv *nodeMap) jacAt(j int, em *expm1Table) float64 {
	ep, en, ok := em.at(j)
	if !ok {
		return lv.jac(float64(j) * em.h)
	}
	return lv.jacWith(ep, en)
}

// expm1s returns expm1(t) and expm1(-t) where the map uses them (a side
// whose b is 0 takes neither: 0 there).
func (lv *nodeMap) expm1s(t float64) (ep, en float64) {
	if lv.betaR != 0 {
		ep = math.Expm1(t)
	}
	if lv.betaL != 0 {
		en = math.Expm1(-t)
	}
	return ep, en
}

// offsetWith is offset at t given ep = expm1(t) and en = expm1(-t).
func (lv *nodeMap) offsetWith(t, ep, en float64) float64 {
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
func (lv *nodeMap) jacWith(ep, en float64) float64 {
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
func (lv *nodeMap) startIndex(em *expm1Table, sign int) int {
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
	probeR        = 4
	probeRatio    = 8
	probeGaussian = 4 // a Gaussian's drop ratio between 16 and 8 sds
	// linearWidth is w / sd of the linear map: a step of h = 0.25 is half
	// a standard deviation.
	linearWidth = 2
)

// chooseMap probes the conditional log-density along axis k at 4 and 8
// standard deviations on each side of the centre (the inner axes at their
// predicted modes), and at 16 where those two say doubly exponential, and
// makes the map linear when a side falls doubly exponentially; where the
// fall is fast enough to need a finer step than the map's width gives (see stripStep), the width is capped, and on the
// outermost axis of a rule over several parameters the shape then follows
// the profile over the inner axes (profileAt) instead of the line.
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
	// The sides along the line with the inner axes at their predicted
	// modes (lineDE: doubly exponential there), and, where one is, for
	// the outermost axis of a rule over several parameters along the
	// profile over the inner axes with their curvature's volume (Laplace),
	// which follows its marginal (profDE, with the rate k sd of its fall):
	// see stripStep.
	var lineDE, profDE [2]bool
	var rate [2]float64
	lineDrop := func(dist float64) float64 {
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
	sides := func(drop func(float64) float64, de *[2]bool) {
		for i, side := range [2]float64{1, -1} {
			d1 := drop(side * probeR * sd)
			if !(d1 > 0) {
				continue
			}
			d2 := drop(side * 2 * probeR * sd)
			// A side that falls doubly exponentially keeps falling at
			// least as fast as a Gaussian out to 16 sds; one whose drop
			// then grows less (a mixture's mean given the other: past the
			// valley between the components, only its prior's slow tail
			// is left: 0.44, 4.5, 12) was a local feature, and a linear
			// map walked out of MaxT before that tail ended.
			if d2 > probeRatio*d1 && !(drop(side*4*probeR*sd) < probeGaussian*d2) {
				de[i] = true
				if !math.IsInf(d2, 1) {
					rate[i] = math.Log(d2/d1-1) / probeR
				}
			}
		}
	}
	sides(lineDrop, &lineDE)
	profDE = lineDE
	if k == 0 && r.d > 1 && (lineDE[0] || lineDE[1]) {
		copy(r.ut, lv.mode)
		if p0, ok := r.profileAt(r.ut); ok {
			rate = [2]float64{}
			profDE = [2]bool{}
			sides(func(dist float64) float64 {
				copy(r.ut, lv.mode)
				r.ut[k] += dist
				for a := k + 1; a < r.d; a++ {
					r.ut[a] += lv.slope[a] * dist
				}
				if f, ok := r.profileAt(r.ut); ok {
					return p0 - f
				}
				return lineDrop(dist)
			}, &profDE)
		}
	}
	shape := lineDE
	width := r.s.Width
	if shape[0] && shape[1] {
		width = linearWidth
	}
	if fastest := max(rate[0], rate[1]); fastest > 0 {
		if capped := stripStep / (fastest * r.h); capped < width {
			// A doubly exponential side of the marginal needs a finer step
			// than the map's usual width: the profile decides the shape,
			// since a side the line alone calls doubly exponential (a
			// funnel's neck) would walk out of MaxT at that width.
			shape = profDE
			width = r.s.Width
			if shape[0] && shape[1] {
				width = linearWidth
			}
			width = max(minStripWidth, min(width, capped))
		}
	}
	if shape[0] {
		lv.betaR = 0
	}
	if shape[1] {
		lv.betaL = 0
	}
	lv.width = width
	lv.w = lv.width * sd
}

// A side whose log-density falls like -A e^(k u) (the side of a log-scale
// parameter away from a prior or likelihood that vanishes like exp(-x^2)
// or exp(-1/x^2)) is analytic and bounded only in the strip |Im u| <
// pi/(2k), where the trapezoid rule's error falls like exp(-pi^2/(k h_u))
// for a step h_u in u (Trefethen and Weideman 2014, section 5): below 1e-10
// for h_u <= stripStep/k. The probes give k sd from the drops d1, d2 at 4
// and 8 sds (d2/d1 = e^(4 k sd) + 1), and the node map's width is capped so
// that its step there, width sd h, keeps to that (a hierarchical scale tau
// with a half-normal prior, whose log tau has a posterior sd of 1 and k =
// 2: at the linear map's usual step of half an sd, log Z was off by 6e-6
// with an estimate of 8e-3), and not below minStripWidth.
const (
	stripStep     = 0.43 // pi^2 / log(1e10)
	minStripWidth = 0.5
)

// profileNewton bounds the Newton steps of profileAt.
const profileNewton = 8

// profileAt maximises log p over the inner axes 1.. from u (damped Newton
// steps, u updated) and returns the maximum minus half the log-determinant
// of the inner axes' negative Hessian there: the Laplace approximation of
// the outer axis's marginal at u[0], up to a constant. ok is false where
// log p is undefined or the curvature not positive definite.
func (r *rule) profileAt(u []float64) (float64, bool) {
	m := r.d - 1
	for it := 0; ; it++ {
		f := r.derivsAt(1, u)
		if math.IsNaN(f) || math.IsInf(f, 0) || !cholesky(r.subC, r.sub, m) {
			return 0, false
		}
		copy(r.step[:m], r.gu[1:])
		cholSolve(r.subC, r.step, m)
		dec := 0.0
		for i := 0; i < m; i++ {
			dec += r.step[i] * r.gu[1+i]
		}
		if !(dec > 1e-10) || it == profileNewton {
			logDet := 0.0
			for i := 0; i < m; i++ {
				logDet += 2 * math.Log(r.subC[i*m+i])
			}
			return f - logDet/2, true
		}
		// Backtrack until log p does not fall.
		accepted := false
		for alpha := 1.0; alpha > 1e-3; alpha /= 2 {
			for i := 0; i < m; i++ {
				r.ut2[1+i] = u[1+i] + alpha*r.step[i]
			}
			r.ut2[0] = u[0]
			r.toZ(r.ut2)
			r.points++
			if f2 := r.p.LogDensity(r.z); f2 >= f-1e-12*math.Abs(f) {
				copy(u[1:], r.ut2[1:r.d])
				accepted = true
				break
			}
		}
		if !accepted {
			return 0, false
		}
	}
}
