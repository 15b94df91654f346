package quadrature

import (
	"errors"
	"fmt"
	"math"
	"sort"
	"sync"

	"bellcheck/engine/special"
)

// walkSet holds the main rule's walks along its inner axes. At each node
// of the axes outside axis a, the walk along a samples the density of a's
// coordinate (z = c + w phi(t), t = jh), integrated over the axes inside
// it, given the outer ones; the weighted sum of the walks' distribution
// functions is the distribution function of a's parameter. Unlike a
// marginal's own walk (Curve), whose nodes each integrate the conditional
// over the other parameters, this sum integrates, at fixed z, over the
// outer axes with the rule's outer nodes, and so converges where the
// conditional distribution function is smooth in them: a group effect
// under a shared scale whose prior is positive at 0 (the effect's
// marginal has a logarithmic peak that no walk along it resolves, while
// given the scale it is normal). Where the outer nodes do not resolve it
// (the banana's y, whose conditional given x is a narrow ridge), the rule
// of step 2h's sum differs from the rule's: the estimate WalkQuantiles
// returns.
type walkSet struct {
	walks []walkRecord
	g     []float64 // the walks' shares per unit t, end to end
	s0    float64   // the rule's sum: the normalisation
	h     float64
}

// walkRecord is one walk: its axis, the lowest tier of its outer nodes
// (1 or 2: it belongs to the rule of step 2h too), its node map on the
// parameter's unconstrained coordinate, and its shares g[off : off+n] at
// t = (lo + i) h, in the units of the rule's sum once multiplied by
// weight (the outer nodes' weights).
type walkRecord struct {
	axis, tier, lo, off, n int
	weight                 float64
	c                      float64
	lv                     nodeMap
}

// recordWalk adds the walk along axis k at the current outer point, whose
// shares are scale times g from node index lo on.
func (r *rule) recordWalk(k int, g []float64, lo int, scale float64) {
	lv := &r.lv[k]
	d := r.d
	base := r.m[k]
	for b := 0; b < k; b++ {
		base += r.L[k*d+b] * r.u[b]
	}
	lkk := r.L[k*d+k]
	ws := &r.walks
	ws.h = r.h
	off := len(ws.g)
	for _, v := range g {
		ws.g = append(ws.g, v*scale)
	}
	rec := walkRecord{
		axis: k, tier: lv.tier, lo: lo, off: off, n: len(g),
		weight: math.Exp(lv.logW - r.ldL),
		c:      base + lkk*lv.c,
		lv:     lv.nodeMap,
	}
	rec.lv.w *= lkk
	ws.walks = append(ws.walks, rec)
}

// ErrNoWalks means the rule kept no walks along the parameter's axis: it
// is the outermost (its marginal is the rule's own: Curve) or the rule is
// one-dimensional.
var ErrNoWalks = errors.New("quadrature: no walks along the parameter's axis")

// axisOf returns the nested rule's axis of parameter k (0 outermost).
func (res *Result) axisOf(k int) int {
	for a, p := range res.Order {
		if p == k {
			return a
		}
	}
	return -1
}

// WalkNodes returns the number of nodes of the rule's walks along
// parameter k's axis (0 for the outermost): WalkQuantiles's cost is about
// twenty evaluations of their distribution functions per quantile, each
// a sum over these nodes.
func (res *Result) WalkNodes(k int) int {
	if res.walks == nil || k < 0 || k >= res.Dim {
		return 0
	}
	axis := res.axisOf(k)
	n := 0
	for i := range res.walks.walks {
		if w := &res.walks.walks[i]; w.axis == axis {
			n += w.n
		}
	}
	return n
}

// WalkQuantiles returns parameter k's quantiles at probs on the original
// scale from the rule's walks along k's axis (see walkSet), and an
// estimate of their error as a probability. Each walk's distribution
// function is the integral of its samples' sinc interpolant (as Curve's).
// The estimate compares, at each quantile, the distribution functions of
// the rule and of the rules of steps 2h and 4h on the same nodes: e2 =
// |F_h - F_2h| and e1 = |F_2h - F_4h|. Where the rules converge like
// e^(-a/h), the error of F_h is e2^3/e1^2; the estimate takes e2^2/e1,
// larger by e1/e2, a margin for a slower convergence; where they do not
// converge (e2 >= e1, as on the banana's y, whose conditional given x the
// outer nodes do not resolve) it takes e2 (estimateAt). Where the estimate
// at a normal's guess of a quantile exceeds walkScreen, it returns no
// quantiles (nil, with that estimate and no error).
func (res *Result) WalkQuantiles(k int, probs []float64) ([]float64, float64, error) {
	if res.Improper {
		return nil, 0, ErrImproper
	}
	if k < 0 || k >= res.Dim {
		return nil, 0, fmt.Errorf("quadrature: parameter %d of %d", k+1, res.Dim)
	}
	ws := res.walks
	sel, err := res.selectWalks(k)
	if err != nil {
		return nil, 0, err
	}
	lo, hi, totals := sel.lo, sel.hi, sel.all
	// F returns the distribution functions at z (the coarser rules' up to
	// tiers) and the rule's density there.
	F := func(z float64, tiers int) ([3]float64, float64) {
		c, dens := ws.cdf(sel, z, tiers)
		for i := range c {
			c[i] /= totals[i]
		}
		return c, dens[0] / totals[0]
	}
	mp := res.mapOf(k)
	out := make([]float64, len(probs))
	worst := 0.0
	// The search starts from a normal's guess (the rule's mean and sd) and
	// takes Newton steps on the rule's distribution function, with its
	// density, kept inside a bracket that each step narrows.
	d := res.Dim
	u := &res.Unconstrained
	mean, sd := u.Mean[k], math.Sqrt(u.Cov[k*d+k])
	if u.MeanInfinite[k] || u.VarInfinite[k] || math.IsNaN(mean) || !(sd > 0) || math.IsInf(sd, 0) {
		// No variance (a Student t with 2 degrees of freedom): the
		// walks' mass-weighted median centre and conditional sd.
		mean, sd = ws.medianWalk(sel)
	}
	for i, p := range probs {
		z := min(hi, max(lo, mean+sd*math.Sqrt2*math.Erfinv(2*p-1)))
		f, dens := F(z, 2)
		if est := estimateAt(f); est > walkScreen {
			// The rules disagree near the quantile already: no search.
			return nil, est, nil
		}
		// The search ends where a step moves the distribution function
		// by less than 1e-11 (the density at z times the step): a scale of
		// the parameter's own, defined where its sd is not.
		a, b := lo, hi
		for it := 0; it < 200; it++ {
			r := f[0] - p
			if math.Abs(r) <= 1e-13 {
				break
			}
			if r < 0 {
				a = z
			} else {
				b = z
			}
			next := z - r/dens
			if !(dens > 0) || !(next > a && next < b) || it%10 == 9 {
				next = (a + b) / 2
			} else if math.Abs(next-z)*dens <= 1e-11 {
				z = next
				break
			}
			z = next
			f, dens = F(z, 0)
		}
		f, _ = F(z, 2)
		worst = max(worst, estimateAt(f))
		out[i] = mp.ToOriginal(z)
	}
	// The walks' mass against the rule's sum: the same sum in another
	// order, so they differ by rounding alone where the records are whole.
	if e := math.Abs(totals[0]/ws.s0 - 1); e > 1e-9 {
		worst = max(worst, e)
	}
	return out, worst, nil
}

// medianWalk returns the mass-weighted medians of the selected walks'
// centres and of their conditional sds (the map's half-width over its
// width in sds).
func (ws *walkSet) medianWalk(sel *walkSelection) (centre, sd float64) {
	type item struct{ v, m float64 }
	cs := make([]item, len(sel.list))
	sds := make([]item, len(sel.list))
	total := 0.0
	for n, i := range sel.list {
		w := &ws.walks[i]
		m := w.weight * sel.totals[n][0]
		cs[n] = item{w.c, m}
		sds[n] = item{w.lv.w / w.lv.width, m}
		total += m
	}
	median := func(xs []item) float64 {
		sort.Slice(xs, func(i, j int) bool { return xs[i].v < xs[j].v })
		acc := 0.0
		for _, x := range xs {
			if acc += x.m; acc >= total/2 {
				return x.v
			}
		}
		return xs[len(xs)-1].v
	}
	return median(cs), median(sds)
}

// selectWalks returns the walks along parameter k's axis, with their
// ranges and totals.
func (res *Result) selectWalks(k int) (*walkSelection, error) {
	if res.Improper {
		return nil, ErrImproper
	}
	if k < 0 || k >= res.Dim {
		return nil, fmt.Errorf("quadrature: parameter %d of %d", k+1, res.Dim)
	}
	ws := res.walks
	if ws == nil {
		return nil, ErrNoWalks
	}
	axis := res.axisOf(k)
	sel := &walkSelection{lo: math.Inf(1), hi: math.Inf(-1)}
	for i := range ws.walks {
		w := &ws.walks[i]
		if w.axis != axis || w.n == 0 {
			continue
		}
		zlo, zhi := w.c+w.lv.offset(ws.h*float64(w.lo)), w.c+w.lv.offset(ws.h*float64(w.lo+w.n-1))
		sel.list = append(sel.list, i)
		sel.zlo, sel.zhi = append(sel.zlo, zlo), append(sel.zhi, zhi)
		sel.totals = append(sel.totals, sincTotals(ws.g[w.off:w.off+w.n], ws.h, w.lo, w.tier))
		sel.lo, sel.hi = min(sel.lo, zlo), max(sel.hi, zhi)
	}
	if len(sel.list) == 0 || !(sel.hi > sel.lo) {
		return nil, ErrNoWalks
	}
	sel.scale = [3]float64{1, math.Ldexp(1, axis), math.Ldexp(1, 2*axis)}
	for i, t := range sel.totals {
		w := ws.walks[sel.list[i]].weight
		for r := range sel.all {
			sel.all[r] += w * sel.scale[r] * t[r]
		}
	}
	for _, t := range sel.all {
		if !(t > 0) {
			return nil, ErrNoWalks
		}
	}
	return sel, nil
}

// estimateAt is the error estimate of the rule's value f[0] from the
// rules of steps 2h and 4h (f[1], f[2]): see WalkQuantiles.
func estimateAt(f [3]float64) float64 {
	e2, e1 := math.Abs(f[0]-f[1]), math.Abs(f[1]-f[2])
	if e2 < e1 {
		return e2 * e2 / e1
	}
	return e2
}

// WalkDensity returns parameter k's marginal density on the original
// scale at xs from the rule's walks along k's axis (the derivative of
// WalkQuantiles's distribution function: the walks' sinc interpolants
// summed), and an estimate of its error relative to its largest value at
// xs, from the rules of steps 2h and 4h as WalkQuantiles's. It costs a
// sum over the walks' nodes a point: where the marginal's own walk takes
// the rule's step in 3-D or 4-D, far less than that walk.
func (res *Result) WalkDensity(k int, xs []float64) ([]float64, float64, error) {
	sel, err := res.selectWalks(k)
	if err != nil {
		return nil, 0, err
	}
	mp := res.mapOf(k)
	out := make([]float64, len(xs))
	worst, peak := 0.0, 0.0
	for i, x := range xs {
		z := mp.FromOriginal(x)
		if math.IsNaN(z) || math.IsInf(z, 0) {
			continue
		}
		_, dens := res.walks.cdf(sel, z, 2)
		jac := special.Exp(-mp.LogJacobian(z))
		var f [3]float64
		for r := range f {
			f[r] = dens[r] / sel.all[r] * jac
		}
		// The interpolants' ringing far out, of the order of the rule's
		// error, is cut at 0 (as Curve.Density's).
		out[i] = max(f[0], 0)
		peak = max(peak, out[i])
		worst = max(worst, estimateAt(f))
	}
	if !(peak > 0) {
		return nil, 0, ErrNoWalks
	}
	return out, worst / peak, nil
}

// walkSelection is the walks along one axis, with their ranges on the
// parameter's coordinate and their totals (see sincTotals), and the
// factors of the coarser rules' outer weights.
type walkSelection struct {
	list     []int
	zlo, zhi []float64
	totals   [][3]float64
	scale    [3]float64
	lo, hi   float64    // the walks' whole range
	all      [3]float64 // the walks' totals summed (the rules' sums)
}

// walkScreen is the error estimate, as a probability, at a normal's
// guess of a quantile above which WalkQuantiles does not search for it
// (the banana's y: 2e-2 at the guess of its 2.5 % quantile, 5e-3 at the
// quantile); the engine's tolerances are below it (the loosest 2e-3,
// where nothing else gives the quantiles: a non-centred hierarchy's mean
// read 1.2e-3 at its guesses).
var walkScreen = 5e-3

// cdf returns, at z, the selected walks' summed distribution functions of
// the rule and of the rules of steps 2h and 4h (tiers 1 and 2: the walks
// whose outer nodes are theirs, each outer node's weight doubled or
// quadrupled) up to tiers, and their densities, in the units of the
// rule's sums.
func (ws *walkSet) cdf(sel *walkSelection, z float64, tiers int) (cdf, dens [3]float64) {
	h := ws.h
	for n, i := range sel.list {
		if z <= sel.zlo[n] {
			// Below the walk: its first node's share is below 1e-10 of its
			// peak, the interpolant's integral there is of that order.
			continue
		}
		w := &ws.walks[i]
		var c [3]float64
		if z >= sel.zhi[n] {
			c = sel.totals[n]
		} else {
			g := ws.g[w.off : w.off+w.n]
			u := z - w.c
			var t, jac float64
			if w.lv.betaL == 0.5 && w.lv.betaR == 0.5 {
				// The sinh map's inverse in closed form.
				t = math.Asinh(u / w.lv.w)
				jac = w.lv.w * math.Cosh(t)
			} else {
				t, jac = w.lv.inverse(u, h*float64(w.lo), h*float64(w.lo+w.n-1), math.NaN())
			}
			var gt [3]float64
			c, gt = sincCDFs(g, h, w.lo, t, min(w.tier, tiers))
			for r := range dens {
				dens[r] += w.weight * sel.scale[r] * gt[r] / jac
			}
		}
		for r := range cdf {
			cdf[r] += w.weight * sel.scale[r] * c[r]
		}
	}
	return cdf, dens
}

// sincTotals returns the integrals of the sinc interpolants of g at t =
// (lo + i) h (h sum g) and, up to tier, of its nodes of index j = lo + i
// divisible by 2 and 4 at steps 2h and 4h.
func sincTotals(g []float64, h float64, lo, tier int) [3]float64 {
	var c [3]float64
	for i, v := range g {
		j := lo + i
		c[0] += v
		if tier >= 1 && j&1 == 0 {
			c[1] += v
		}
		if tier >= 2 && j&3 == 0 {
			c[2] += v
		}
	}
	return [3]float64{h * c[0], 2 * h * c[1], 4 * h * c[2]}
}

// sincCDFs returns the integrals up to t of the interpolants of
// sincTotals, C(t) = h sum_i g_i (1/2 + Si(pi (t/h - j_i))/pi), and the
// interpolants at t, sum_i g_i sinc(t/h - j_i) (at steps 2h and 4h over
// the nodes they take).
func sincCDFs(g []float64, h float64, lo int, t float64, tier int) (cdf, dens [3]float64) {
	s := t / h
	// sin(pi (s - j)) = (-1)^j sin(pi s): one sine a walk and rule.
	var sinS [3]float64
	for r := 0; r <= tier; r++ {
		sinS[r] = math.Sin(math.Pi * s / float64(int(1)<<r))
	}
	for i, v := range g {
		if v == 0 {
			continue
		}
		j := lo + i
		for r := 0; r <= tier; r++ {
			step := 1 << r
			if j%step != 0 {
				break
			}
			m := j / step
			x := s/float64(step) - float64(m)
			cdf[r] += v * (0.5 + siPi(x)/math.Pi)
			switch {
			case math.Abs(x) < 1e-9:
				dens[r] += v
			case m&1 == 0:
				dens[r] += v * sinS[r] / (math.Pi * x)
			default:
				dens[r] -= v * sinS[r] / (math.Pi * x)
			}
		}
	}
	for r := range cdf {
		f := h * float64(int(1)<<r)
		cdf[r] *= f
	}
	return cdf, dens
}

// siPi returns Si(pi x), the integral of sin(u)/u over [0, pi x], for any
// x: the cubic Hermite interpolant of a table at steps of 1/siFineSub in
// x, with the exact derivative sin(pi x)/x (its error is below 4e-9:
// (1/64)^4/384 times the bound pi^4/4 of the fourth derivative), and the
// asymptotic pi/2 - cos(pi x)/(pi x) beyond the table (an error below
// 1/(pi x)^2 < 4e-6 there, where a walk's nodes are far from the point).
func siPi(x float64) float64 {
	siFineOnce.Do(buildSiFine)
	sign := 1.0
	if x < 0 {
		x, sign = -x, -1
	}
	pos := x * siFineSub
	m := int(pos)
	if m >= len(siFine)-1 {
		return sign * (math.Pi/2 - math.Cos(math.Pi*x)/(math.Pi*x))
	}
	f := pos - float64(m)
	d0, d1 := siFineD[m], siFineD[m+1]
	f2, f3 := f*f, f*f*f
	v := (2*f3-3*f2+1)*siFine[m] + (f3-2*f2+f)*d0 + (-2*f3+3*f2)*siFine[m+1] + (f3-f2)*d1
	return sign * v
}

const (
	siFineSub = 64
	siFineMax = 160 // more than the nodes of any walk
)

var (
	siFineOnce sync.Once
	siFine     []float64 // Si(pi m / siFineSub)
	siFineD    []float64 // its derivative in m: sin(pi x)/x / siFineSub at x = m / siFineSub
)

// buildSiFine tabulates Si(pi m / siFineSub) by an 8-point Gauss-Legendre
// rule on each step (a smooth piece of the integrand: exact to rounding).
func buildSiFine() {
	n := siFineSub*siFineMax + 1
	siFine = make([]float64, n)
	siFineD = make([]float64, n)
	step := 1.0 / siFineSub
	us, ws := unitLegendre(8, step)
	sines := newStepSines(siFineSub, us, math.Pi)
	siFineD[0] = math.Pi / siFineSub
	for k := 1; k < n; k++ {
		a, s := float64(k-1)*step, 0.0
		for i, u := range us {
			s += ws[i] * sines.at(k-1, i) / (a + u)
		}
		siFine[k] = siFine[k-1] + s
		siFineD[k] = sines.sinJ[k%(2*siFineSub)] / (float64(k) / siFineSub) / siFineSub
	}
}
