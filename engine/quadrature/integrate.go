package quadrature

import (
	"context"
	"math"

	"bellcheck/engine/special"
	"bellcheck/engine/target"
)

// Moments of the normalised density on one scale, in parameter order. A
// moment that is infinite is NaN, with its flag set (and every moment of
// higher order is infinite too); the errors are estimates (see the package
// documentation).
type Moments struct {
	Mean, MeanErr []float64
	// Cov and CovErr are row-major d×d.
	Cov, CovErr                 []float64
	Skewness, SkewnessErr       []float64
	ExcessKurtosis, KurtosisErr []float64
	// MeanInfinite[a] and the others say that the moment of that order of
	// parameter a is infinite (its tail decays too slowly).
	MeanInfinite, VarInfinite, SkewnessInfinite, KurtosisInfinite []bool
}

// Result is the density integrated by the nested rule.
type Result struct {
	Dim int
	// LogZ is log of the integral of p over the unconstrained scale; LogZErr
	// the estimate of its error (an absolute error in log Z).
	LogZ, LogZErr float64
	// Improper says that the density's integral is infinite: along some
	// axis its share does not decay (LogZ is then +Inf).
	Improper bool
	// Unconstrained holds the moments of z, Original those of x(z).
	Unconstrained, Original Moments
	// Nodes is the finest rule's node set.
	Nodes *Nodes
	// Points counts the density's evaluations (block and single), Derivs
	// the evaluations with gradient and Hessian, NonFinite the nodes where
	// log p was NaN or +Inf (left out).
	Points, Derivs, NonFinite int
	// NonFiniteNearMass counts the undefined nodes next to a node that
	// holds a share of its line's mass above 1e-8: an edge of the density
	// (a region where the model is undefined) that the rule does not
	// resolve. Undefined nodes far in the tails (an underflow) are not.
	NonFiniteNearMass int
	// Order is the nested rule's axis order, outermost first.
	Order []int

	p target.Density
	// outer is the marginal of the outermost axis's parameter, from the
	// rule's own sums (see outerCurve); nil in 1-D.
	outer *Curve
	// walks are the rule's walks along its inner axes (see walkSet); nil
	// in 1-D.
	walks    *walkSet
	start    Start
	settings Settings
	// the main rule's Gaussian (its start): the guesses of the slices
	centre, cov []float64
	// discErr is the discretisation part of LogZErr (what refining the
	// step reduces; the truncation part it does not).
	discErr float64
	// zLevels are the integral by the rules of steps h, 2h and 4h (the
	// sums behind discErr), for a finer rule's estimate (sharpen).
	zLevels [3]float64
	// boundErr is the rounding of the original coordinate near a finite
	// bound (see boundRounding), a relative error of every sum.
	boundErr float64
}

// Integrate integrates p, a density on the unconstrained scale, by the
// nested sinh-trapezoid rule centred at start, and summarises it. It checks
// ctx between lines of nodes and returns ctx's error when cancelled.
func Integrate(ctx context.Context, p target.Density, start Start, s Settings) (*Result, error) {
	if err := checkStart(p, start, s); err != nil {
		return nil, err
	}
	if s.lines == nil {
		s.lines = new(int) // shared by the pilot, the main rule and the result's slices
	}
	main := start
	pilot := start.NegHessian == nil
	var pilotPoints, pilotDerivs, pilotNodes int
	if s.Order == nil {
		ps := s
		var pinScale bool
		ps.Order, pinScale = scaleOrder(p, start)
		ps.Step = 2 * s.withDefaults().Step
		ps.Progress = nil
		if s.Progress != nil {
			ps.Progress = func(f float64) { s.Progress(0.2 * f) }
		}
		pr, err := newRule(ctx, p, start, ps)
		if err != nil {
			return nil, err
		}
		// A start given by a covariance (covering several modes, say) is
		// not moved to the nearest mode on the outer axis.
		pr.pilot = start.NegHessian == nil
		if err := pr.run(); err != nil {
			return nil, err
		}
		pilotPoints, pilotDerivs, pilotNodes = pr.points, pr.derivs, pr.nodes.Len()
		if res, err := pr.result(start, ps); err == nil {
			s.Order, main, pilot = fromPilot(res, start, ps.Order, pinScale)
		} else {
			s.Order = ps.Order
		}
	}
	progress := s.Progress
	if progress != nil {
		s.Progress = func(f float64) { progress(0.2 + 0.8*f) }
	}
	used, usedDerivs := pilotPoints, pilotDerivs
	// The rule at step h has about 2^d times the nodes of the rule at 2h.
	expect := pilotNodes << uint(p.Dim()) * 5 / 4
	var prev *Result // the rule of twice the step, once refined
	for halvings := 0; ; halvings++ {
		r, err := newRule(ctx, p, main, s)
		if err != nil {
			return nil, err
		}
		r.nodes.reserve(min(expect, s.withDefaults().MaxPoints), p.Dim())
		r.pilot = pilot
		if r.keepWalks = p.Dim() > 1; r.keepWalks {
			// The lines' nodes, about the rule's.
			r.walks.g = make([]float64, 0, min(expect, s.withDefaults().MaxPoints))
		}
		if err := r.run(); err != nil {
			return nil, err
		}
		used += r.points
		usedDerivs += r.derivs
		r.points, r.derivs = used, usedDerivs
		res, err := r.result(main, s)
		if err != nil {
			return nil, err
		}
		if prev != nil {
			res.sharpen(prev, r.h)
		}
		prev = res
		// Refine while the discretisation estimate misses the target and
		// the next rule (about 2^d times the points) fits the budget, at
		// most three times.
		next := r.points << uint(p.Dim())
		expect = r.nodes.Len() << uint(p.Dim()) * 5 / 4
		if res.Improper || !(res.discErr > s.target(p.Dim())) || next > s.withDefaults().RefineBudget || halvings >= maxHalvings {
			if progress != nil {
				progress(1)
			}
			return res, nil
		}
		s.Step = s.withDefaults().Step / 2
	}
}

// fromPilot returns the axis order and the start of the main rule from a
// pilot run at twice the step (in the order of ScaleOrder). The axes are
// reordered by the ratio of the
// pilot's marginal variance to the curvature's (the Laplace variance at the
// mode), smallest first: a parameter whose spread the mode's curvature
// describes goes outside, one whose spread depends on the others (the
// funnel's x, a location whose scale is another parameter) inside, where
// each outer node rescales it. When the pilot's moments are finite, the
// main rule is centred at its mean and whitened by its covariance, which
// describe the mass better than the mode where the two differ (a funnel's
// mode lies far down its neck).
func fromPilot(res *Result, start Start, pilotOrder []int, pinScale bool) ([]int, Start, bool) {
	d := res.Dim
	lap, err := startCov(start, d)
	order := append([]int(nil), pilotOrder...)
	if err != nil {
		return order, start, false
	}
	u := res.Unconstrained
	ratio := make([]float64, d)
	finite := !res.Improper
	for k := 0; k < d; k++ {
		v := u.Cov[k*d+k]
		ratio[k] = v / lap[k*d+k]
		if math.IsNaN(v) || u.VarInfinite[k] {
			ratio[k] = math.Inf(1)
			finite = false
		}
	}
	// Ratios within a factor 1.5 keep the pilot's order (insertion sort:
	// the comparison is not transitive, but d <= 4). A start given by a
	// covariance (several modes' mixture, or the grid's moments where the
	// density has no mode) has no curvature to compare with: the pilot's
	// order stands.
	// A decisive scale (scaleOrder) stays outermost.
	first := 0
	if pinScale {
		first = 1
	}
	for i := first + 1; i < d && start.NegHessian != nil; i++ {
		for j := i; j > first && ratio[order[j]]*1.5 < ratio[order[j-1]]; j-- {
			order[j], order[j-1] = order[j-1], order[j]
		}
	}
	if !finite {
		return order, start, false
	}
	cov := append([]float64(nil), u.Cov...)
	c := make([]float64, d*d)
	if !cholesky(c, cov, d) {
		return order, start, false
	}
	return order, Start{Mode: append([]float64(nil), u.Mean...), Cov: cov, NoMode: start.NoMode}, true
}

// remainderMargin multiplies the walks' geometric remainders (the tails
// beyond the last nodes, estimated from the decay between the last two,
// and left out of the sums) where they enter the error estimates: a tail
// that decays a little more slowly than geometrically further out leaves
// more than the estimate (the variance of log s from three readings with
// a 1/s prior: 1.7e-12 against a remainder of 1.6e-12 when the walks end
// at 1e-10 of their peaks).
const remainderMargin = 2

func (r *rule) result(start Start, s Settings) (*Result, error) {
	d := r.d
	lv := &r.lv[0]
	res := &Result{
		Dim: d, Nodes: &r.nodes, Points: r.points, Derivs: r.derivs, NonFinite: r.nonFinite, NonFiniteNearMass: r.nearNaN,
		Order: append([]int(nil), r.perm...), p: r.p, start: start, settings: s,
	}
	res.Nodes.dim = d
	res.centre = append([]float64(nil), start.Mode...)
	if c, err := startCov(start, d); err == nil {
		res.cov = c
	}
	s0 := lv.sum[0][0]
	if !(s0 > 0) {
		return nil, ErrNoMass
	}
	r.clearStrayFlags()
	res.Improper = lv.inf[0] || math.IsInf(s0, 1)
	if res.Improper {
		res.LogZ, res.LogZErr = math.Inf(1), math.Inf(1)
	} else {
		zErr := estimate(s0, lv.sum[1][0], lv.sum[2][0], s0, r.h)
		res.LogZ = r.ref + r.ldL + math.Log(s0)
		res.boundErr = r.boundRounding()
		r.boundErr = res.boundErr
		res.LogZErr = (zErr+remainderMargin*lv.rem[0])/s0 + roundoff + res.boundErr
		res.discErr = zErr / s0
		res.zLevels = [3]float64{s0, lv.sum[1][0], lv.sum[2][0]}
	}
	if !res.Improper {
		res.outer = r.outerCurve(s0)
		if r.keepWalks {
			res.walks = &r.walks
			res.walks.s0 = s0
		}
	}
	res.Unconstrained = r.moments(0, res.Improper)
	res.Original = r.moments(1, res.Improper)
	return res, nil
}

// strayTail and unresolvedTail: see clearStrayFlags. A walk that reached
// MaxT before the density's share fell holds a share of the density it
// never resolved; far down a centred hierarchical model's neck (two
// schools' effects and their mean under a flat sd on [0, 10]) the inner
// walks lose the conditional's scale to rounding (the effects' precision
// 1/tau^2 against the mean's 1/400) and held 4e-11 of the density's sum,
// which at 1e-12 made the rule call the density improper; let go, the rule's
// log Z was within 3e-8 of a quadrature of ours. An improper density's
// walks hold shares near its peak's.
const (
	strayTail      = 1e-12
	unresolvedTail = 1e-9
)

// maxHalvings bounds the refinements of the step.
const maxHalvings = 3

// boundRounding estimates the relative error of the sums that comes from
// the model seeing x = x(z), a double: near a finite bound b the distance
// x - b carries a rounding of about eps max(|x|, |b|), a relative error
// that reaches log p through its power of (x - b) (taken as 1). It is the
// posterior mean of eps max(|x|, |b|) / |x - b| over the nodes, at the
// nearer bound of each parameter with a log or logit map.
func (r *rule) boundRounding() float64 {
	const eps = 0x1p-52
	d := r.d
	n := &r.nodes
	top := math.Inf(-1)
	for i := range n.logW {
		top = max(top, n.logW[i]+n.logP[i])
	}
	var num, den float64
	for i := range n.logW {
		w := special.Exp(n.logW[i] + n.logP[i] - top)
		den += w
		worst := 0.0
		for a := 0; a < d; a++ {
			mp := r.maps[a]
			if mp.Scale.IsIdentity() {
				continue
			}
			x := mp.ToOriginal(n.z[i*d+r.perm[a]])
			for _, b := range [2]float64{mp.Lo, mp.Hi} {
				if math.IsInf(b, 0) {
					continue
				}
				dist := math.Abs(x - b)
				if dist == 0 {
					worst = max(worst, 1)
					continue
				}
				worst = max(worst, min(1, eps*max(math.Abs(x), math.Abs(b))/dist))
			}
		}
		num += w * worst
	}
	if !(den > 0) {
		return 0
	}
	return num / den
}

// roundoff is the floor of every relative error estimate.
const roundoff = 1e-13

// safety multiplies the extrapolated discretisation error.
const safety = 3

// estimate returns the error estimate of the finest of three values of a
// quantity from the rules of steps h (v1), 2h (v2) and 4h (v4), scale being
// the quantity's natural size. The trapezoid rule converges exponentially
// for an integrand analytic in a strip and decaying fast (Trefethen and
// Weideman 2014, section 5): err(h) ~ A exp(-c/h), so that halving h
// squares the relative error when A is about the quantity's size: err(h)
// ~ e2^2 / scale with e2 = |v2 - v1| ~ err(2h). The rate the three values
// show, c = 4h log(e1/e2) with e1 = |v4 - v2| ~ err(4h), decides how far
// that holds. Where c >= fastRate the sequence converges exponentially
// and the squaring is the estimate; the rule of step 4h is then too
// coarse to tell A (its rate is slower than the finer rules': the 3-D
// sensor's log Z has e1 = 8.6e-3, e2 = 4.2e-4 at h = 1/4, so c = 3.0, and
// an actual error of 2.4e-8, a rate of 4.9 from 2h to h; e2^3/e1^2, the
// error the rate c predicts, gave 9.7e-7). Where c is smaller (an
// integrand not analytic, or whose strip is thin: a kink, a plateau's
// edges) the larger of the squaring and e2^3/e1^2, the rate c carried on,
// is taken; where the values do not yet converge (e1 <= e2) the estimate
// is e2 itself. The extrapolated estimates are multiplied by safety.
func estimate(v1, v2, v4, scale, h float64) float64 {
	e2 := math.Abs(v2 - v1)
	e1 := math.Abs(v4 - v2)
	if !(e1 > e2) {
		return e2
	}
	byRate := e2 * e2 * e2 / (e1 * e1)
	if !(scale > 0) {
		return safety * byRate
	}
	squared := e2 * e2 / scale
	if e2 == 0 || 4*h*math.Log(e1/e2) >= fastRate {
		return safety * squared
	}
	return safety * max(byRate, squared)
}

// sharpen revises the discretisation part of res's log Z error estimate
// with a fourth level, the change from step 8h to 4h of the rule of twice
// the step (prev, same start). The three levels of res alone cannot tell
// whether the rate c of err(h) ~ A exp(-c/h) holds from 2h to h, so
// estimate takes the squaring of the last change in the fast regime, a
// bound that assumes A about the integral's size. Where the four levels
// show the log-ratio of successive changes at least doubling (as that
// form has it: log(d2/d3) >= 2 log(d1/d2)), the rate is steady or
// speeding up, and the rate's extrapolation d3^3/d2^2 (times safety) is
// the estimate where it is smaller than the squaring. (The two-mixture
// reference case: changes 0.28, 0.13 and 4.0e-4 from step 1 to 1/8; the
// squaring gave 4.9e-7 against an error of 2.2e-10; the rate, 1.1e-8. A
// rule not refined has no fourth level: the banana's rule at its default
// step would have stopped with an error of 1.1e-8 under an estimate of
// 3.1e-9 from the rate alone.)
func (res *Result) sharpen(prev *Result, h float64) {
	if res.Improper || prev.Improper || !(res.zLevels[0] > 0) || !(prev.zLevels[0] > 0) {
		return
	}
	d1 := math.Abs(prev.zLevels[2]-prev.zLevels[1]) / prev.zLevels[0]
	d2 := math.Abs(res.zLevels[2]-res.zLevels[1]) / res.zLevels[0]
	d3 := math.Abs(res.zLevels[1]-res.zLevels[0]) / res.zLevels[0]
	if !(d1 > d2 && d2 > d3 && d3 > 0) || 4*h*math.Log(d2/d3) < fastRate || math.Log(d2/d3) < 2*math.Log(d1/d2) {
		return
	}
	byRate := safety * d3 * d3 * d3 / (d2 * d2)
	if byRate >= res.discErr {
		return
	}
	res.LogZErr -= res.discErr - byRate
	res.discErr = byRate
}

// fastRate is the rate c of err(h) ~ A exp(-c/h), fitted from the rules of
// steps 4h, 2h and h, from which the convergence counts as exponential
// (see estimate). The reference cases' sequences either show c >= 2.4 or
// c <= 0.3 (the plateau, the undefined region, the long Lorenz cost).
const fastRate = 2

// stats are the moments of one scale from one rule's sums.
type stats struct {
	mean, cov, skew, kurt []float64
}

func (r *rule) statsOf(sum []float64, sc int, st *stats) {
	d := r.d
	l := r.lay
	o := sc * l.nBlock
	s0 := sum[0]
	off := r.m
	if sc == 1 {
		off = r.xm
	}
	for a := 0; a < d; a++ {
		mu := sum[o+l.y1+a] / s0
		st.mean[a] = off[a] + mu
	}
	for a := 0; a < d; a++ {
		mua := sum[o+l.y1+a] / s0
		for b := 0; b < d; b++ {
			mub := sum[o+l.y1+b] / s0
			st.cov[a*d+b] = sum[o+l.y2+l.pair(a, b)]/s0 - mua*mub
		}
		m2 := sum[o+l.y2+l.pair(a, a)] / s0
		m3 := sum[o+l.y3+a] / s0
		m4 := sum[o+l.y4+a] / s0
		c2 := m2 - mua*mua
		c3 := m3 - 3*mua*m2 + 2*mua*mua*mua
		c4 := m4 - 4*mua*m3 + 6*mua*mua*m2 - 3*mua*mua*mua*mua
		st.skew[a] = c3 / math.Pow(c2, 1.5)
		st.kurt[a] = c4/(c2*c2) - 3
	}
}

func newStats(d int) stats {
	return stats{mean: make([]float64, d), cov: make([]float64, d*d), skew: make([]float64, d), kurt: make([]float64, d)}
}

// moments returns the moments of scale sc in parameter order.
func (r *rule) moments(sc int, improper bool) Moments {
	d := r.d
	lv := &r.lv[0]
	var st [3]stats
	for t := range st {
		st[t] = newStats(d)
		r.statsOf(lv.sum[t], sc, &st[t])
	}
	mo := Moments{
		Mean: make([]float64, d), MeanErr: make([]float64, d),
		Cov: make([]float64, d*d), CovErr: make([]float64, d*d),
		Skewness: make([]float64, d), SkewnessErr: make([]float64, d),
		ExcessKurtosis: make([]float64, d), KurtosisErr: make([]float64, d),
		MeanInfinite: make([]bool, d), VarInfinite: make([]bool, d),
		SkewnessInfinite: make([]bool, d), KurtosisInfinite: make([]bool, d),
	}
	s0 := lv.sum[0][0]
	rem0 := remainderMargin*lv.rem[0]/s0 + r.boundErr
	off := func(a int) float64 {
		if sc == 1 {
			return r.xm[a]
		}
		return r.m[a]
	}
	w1, w2, w4 := r.lay.wY1, r.lay.wY2, r.lay.wY4
	if sc == 1 {
		w1, w2, w4 = r.lay.wX1, r.lay.wX2, r.lay.wX4
	}
	for a := 0; a < d; a++ {
		pa := r.perm[a]
		inf := func(m int) bool { return improper || lv.inf[flagIndex(d, sc, m, a)] }
		mo.MeanInfinite[pa] = inf(0)
		mo.VarInfinite[pa] = mo.MeanInfinite[pa] || inf(1)
		mo.SkewnessInfinite[pa] = mo.VarInfinite[pa] || inf(2)
		mo.KurtosisInfinite[pa] = mo.SkewnessInfinite[pa] || inf(3)
	}
	for a := 0; a < d; a++ {
		pa := r.perm[a]
		va := st[0].cov[a*d+a]
		sd := math.Sqrt(math.Abs(va))
		rem2 := remainderMargin * lv.rem[w2(a)] / s0
		rem4 := remainderMargin * lv.rem[w4(a)] / s0
		mo.Mean[pa] = st[0].mean[a]
		mo.MeanErr[pa] = estimate(st[0].mean[a], st[1].mean[a], st[2].mean[a], sd, 0) +
			remainderMargin*lv.rem[w1(a)]/s0 + math.Abs(st[0].mean[a]-off(a))*rem0 + roundoff*(sd+math.Abs(st[0].mean[a]))
		mo.Skewness[pa] = st[0].skew[a]
		mo.SkewnessErr[pa] = estimate(st[0].skew[a], st[1].skew[a], st[2].skew[a], 1, 0) +
			math.Sqrt(rem2*rem4)/(va*sd) + roundoff
		mo.ExcessKurtosis[pa] = st[0].kurt[a]
		mo.KurtosisErr[pa] = estimate(st[0].kurt[a], st[1].kurt[a], st[2].kurt[a], 1, 0) + rem4/(va*va) + roundoff
		for b := 0; b < d; b++ {
			pb := r.perm[b]
			vb := st[0].cov[b*d+b]
			scale := math.Sqrt(math.Abs(va * vb))
			remb := remainderMargin * lv.rem[w2(b)] / s0
			mo.Cov[pa*d+pb] = st[0].cov[a*d+b]
			mo.CovErr[pa*d+pb] = estimate(st[0].cov[a*d+b], st[1].cov[a*d+b], st[2].cov[a*d+b], scale, 0) +
				math.Sqrt(rem2*remb) + scale*rem0 + roundoff*scale
		}
		if mo.MeanInfinite[pa] {
			mo.Mean[pa], mo.MeanErr[pa] = math.NaN(), math.NaN()
		}
		if mo.SkewnessInfinite[pa] {
			mo.Skewness[pa], mo.SkewnessErr[pa] = math.NaN(), math.NaN()
		}
		if mo.KurtosisInfinite[pa] {
			mo.ExcessKurtosis[pa], mo.KurtosisErr[pa] = math.NaN(), math.NaN()
		}
	}
	for a := 0; a < d; a++ {
		for b := 0; b < d; b++ {
			if mo.VarInfinite[a] || mo.VarInfinite[b] {
				mo.Cov[a*d+b], mo.CovErr[a*d+b] = math.NaN(), math.NaN()
			}
		}
	}
	return mo
}
