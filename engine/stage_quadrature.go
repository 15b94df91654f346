package engine

import (
	"errors"
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/mat"

	"bellcheck/engine/fit"
	"bellcheck/engine/grid"
	"bellcheck/engine/quadrature"
	"bellcheck/engine/transform"
)

// useQuadrature switches the exact results (log Z, the moments, quantiles,
// skewness and kurtosis on both scales, the variance and improper
// verdicts) from the grid to the nested rule of engine/quadrature, which
// integrates on the unconstrained scale around the modes (those of the
// mode search, which starts from the grid's peaks, and those that
// space-filling starts find). It is on: the rule is the exact reference
// wherever it applies; the grid's results stay where it does not (see
// exactByQuadrature). Where it stands, the comparison and the plots use
// it too (stage_compare.go, plots_rule.go).
// Tests turn it off with BELLCHECK_QUADRATURE=0 to check the grid alone.
var useQuadrature = true

// quadratureLogZErrMax is the error estimate of log Z above which the
// nested rule's results are not used (the grid's stay).
const quadratureLogZErrMax = 1e-3

// exactByQuadrature replaces the reference's exact results by the nested
// rule's, where it applies and succeeds: every parameter has an
// unconstrained scale (the support is the whole line, [lo, inf] or [lo,
// hi]), the user set no box (the grid integrates over the box), and a mode
// was found. Where it does not, the grid's results stay as they are.
func (a *analysis) exactByQuadrature() error {
	a.tr.enter(stageExact)
	q, maps, err := a.integrateNested()
	if err != nil {
		return err
	}
	if q == nil {
		if a.scout {
			return errFullGrid
		}
		a.checkReference()
		return nil
	}
	return a.ref.takeQuadrature(a, q, maps)
}

// integrateNested runs the nested rule where it applies and returns its
// result, or nil where it does not apply or does not succeed.
func (a *analysis) integrateNested() (*quadrature.Result, []transform.Map, error) {
	if len(a.modes.fitModes) == 0 && a.neckCoordinate() < 0 {
		return nil, nil, nil
	}
	d := a.d
	maps := make([]transform.Map, d)
	for k, prm := range a.m.Params {
		if a.pinned[k][0] || a.pinned[k][1] {
			return nil, nil, nil
		}
		if math.IsInf(prm.Lo, -1) && !math.IsInf(prm.Hi, 1) {
			return nil, nil, nil // no unconstrained scale for (-inf, hi]
		}
		maps[k] = transform.Map{Scale: transform.Unconstrained(prm.Lo, prm.Hi), Lo: prm.Lo, Hi: prm.Hi}
	}
	p, err := transform.Wrap(a.ev, maps)
	if err != nil {
		return nil, nil, nil
	}
	start, several, ok, err := a.quadratureStart(p, maps)
	if err != nil || !ok {
		return nil, nil, err
	}
	a.ref.severalModes = several
	q, err := quadrature.Integrate(a.ctx, p, start, quadrature.Settings{Maps: maps, Progress: a.tr.at, Tick: a.tr.beat})
	if err != nil {
		if ctxErr := a.ctx.Err(); ctxErr != nil {
			return nil, nil, ctxErr
		}
		// ErrBadStart: the mixture of several modes has its mean where
		// log p is -inf (a support with gaps, as in the fuzz corpus's
		// bba4799f6f6e200a): the grid's results stay.
		if errors.Is(err, quadrature.ErrTooLarge) || errors.Is(err, quadrature.ErrNoMass) || errors.Is(err, quadrature.ErrBadStart) {
			return nil, nil, nil
		}
		return nil, nil, fmt.Errorf("engine: the nested rule: %w", err)
	}
	if !q.Improper && !(q.LogZErr < quadratureLogZErrMax) {
		return nil, nil, nil
	}
	if q.Improper && !a.gridSeesHeavyTails() {
		// The rule's tail check takes a share that does not decay where a
		// walk reaches MaxT for an infinite integral; a density whose
		// conditional sd at the mode is far narrower than its extent (a
		// chaotic cost, with local minima over the whole prior range)
		// fools it, while the grid's box closes around the mass. The
		// verdicts disagree: the grid's results and checks stay.
		return nil, nil, nil
	}
	if q.NonFiniteNearMass > 0 {
		// log p is undefined next to the mass (a region the support does
		// not declare): the density has an edge the rule does not
		// resolve; the grid's end corrections handle it.
		return nil, nil, nil
	}
	if a.ruleMissesGridMass(q) {
		if !a.scout {
			a.diag.add(CodeRuleMissedMass, SeverityInfo,
				"The nested rule found less mass than the grid (log Z %.4g against the grid's %.4g): it starts from one Gaussian summarising the modes, whose nodes can step over a mode far narrower than the others; the exact results are the grid's.",
				q.LogZ, a.ref.grid.Stats.LogZ)
		}
		return nil, nil, nil
	}
	// A grid that cannot resolve the density has no log Z to check the
	// rule against (a narrow neck makes it too large); the mode search
	// starts from the grid's peaks, so a spike the grid sees is among the
	// modes the rule is centred on, and the comparison stage's ELBO check
	// still marks the results unresolved when a fit finds mass the rule
	// missed.
	return q, maps, nil
}

// ruleMissesGridMass reports whether the grid, where it resolves the
// density, holds clearly more mass than the nested rule found: a narrow
// mode beside a wide one, whose summary Gaussian the rule starts from puts
// nodes too far apart to see the narrow one (a mixture with a component of
// sd 0.05 holding 30 % of the mass, 8 sds of the wide one away: the rule's
// log Z was log 0.7 and its mean that of the wide component alone, while
// the 1,001-point grid saw both). The grid's own log Z is a lower bound up
// to its resolution (its box leaves out the tails), so a rule short of it
// by more than missedMassTol is refused, and by less where the shortfall
// exceeds four times the grid's half-resolution change and twice the
// rule's own estimate (at least missedMassFloor): a normal density times
// exp(3 cos 20x), whose rule stepped over its wiggles far out, was 2.7e-3
// short of the grid's log Z (which was right to 1e-13) with an estimate
// of 7.7e-4. The grid's results then stand. Where the rule found more
// (tails beyond the box), it stands.
func (a *analysis) ruleMissesGridMass(q *quadrature.Result) bool {
	if q.Improper || a.ref.grid == nil {
		return false
	}
	if posInf, layers := a.gridUnresolved(); posInf > 0 || len(layers) > 0 {
		return false
	}
	st := &a.ref.grid.Stats
	if math.IsNaN(st.LogZ) || math.IsInf(st.LogZ, 0) || !(st.LogZErr < 0.1) {
		return false
	}
	return q.LogZ < st.LogZ-min(missedMassTol, max(4*st.LogZErr+2*q.LogZErr, missedMassFloor))
}

// missedMassFloor is the least shortfall that ruleMissesGridMass counts
// where both error estimates are small.
const missedMassFloor = 1e-6

// missedMassTol is the least shortfall of the rule's log Z below the
// grid's that ruleMissesGridMass counts as missed mass: about half a
// percent of the mass.
const missedMassTol = 0.005

// gridSeesHeavyTails reports whether the grid backs an improper verdict:
// more mass beyond its box than in it, a face its box search capped with
// mass left in the outer layer (tails too heavy for the grid, as an
// improper density's), or a power at a bound of the support too steep to
// integrate.
func (a *analysis) gridSeesHeavyTails() bool {
	if a.ref.tailMass > 1 {
		return true
	}
	for k := 0; k < a.d; k++ {
		for side := 0; side < 2; side++ {
			if a.ref.box.Capped[k][side] && a.ref.edgeMass[k][side] > 1e-10 {
				return true
			}
		}
	}
	for _, sb := range a.singularBounds() {
		if sb.slope < nonIntegrableSlope {
			return true
		}
	}
	return false
}

// quadratureStart returns the rule's start on the unconstrained scale:
// the best mode with its curvature, or, where the mode search found
// several, the Gaussian mixture of the modes (weighted by their masses)
// summarised by its mean and covariance, which covers them all.
func (a *analysis) quadratureStart(p *transform.Density, maps []transform.Map) (start quadrature.Start, several, ok bool, err error) {
	d := a.d
	if len(a.modes.fitModes) == 0 {
		// No mode on the fitting scale: where one parameter has a log or
		// logit fitting scale, the mode search may have run down a
		// funnel's neck along it from every start (a hierarchical scale:
		// on the scouting grid no start stopped), and the start is the
		// profile's along it, from the grid's highest point.
		b := a.neckCoordinate()
		top := make([]float64, d)
		a.ref.grid.Point(a.ref.grid.ArgMax, top)
		from := a.startInside(top, maps)
		from[b] = 0
		if start, ok := a.profileStart(p, b, from); ok {
			return start, false, true, nil
		}
		return quadrature.Start{}, false, false, nil
	}
	if a.modeDownANeck() {
		// The fitting scale's best mode lies far down one coordinate of an
		// unconstrained fitting scale (a hierarchical scale on the log
		// scale, whose mode search ran down the funnel's neck to tau =
		// 6e-10): as on the identity scale, where that mode lies on the
		// bound, the start is the profile's.
		if b, from, one := a.boundCoordinate(maps); one {
			if start, ok := a.profileStart(p, b, from); ok {
				return start, false, true, nil
			}
		}
	}
	var found []polished
	onBound := false
	for _, fm := range a.modes.fitModes {
		onBound = onBound || fm.OnBound
		m, ok, err := a.polish(p, a.startInside(fm.X, maps))
		if err != nil {
			return quadrature.Start{}, false, false, err
		}
		if ok && !seen(found, m) {
			found = append(found, m)
		}
	}
	if len(found) == 0 {
		b, from, one := a.boundCoordinate(maps)
		if one {
			if start, ok := a.profileStart(p, b, from); ok {
				return start, false, true, nil
			}
		}
		if !onBound && !one {
			// No mode where the fitting scale has one inside the support:
			// a kink or a flat top, whose curvature says nothing; the
			// grid's results stay.
			return quadrature.Start{}, false, false, nil
		}
		start, ok := a.gridStart(maps)
		return start, false, ok, nil
	}
	found, err = a.wideStarts(p, found)
	if err != nil {
		return quadrature.Start{}, false, false, err
	}
	if len(found) == 1 {
		return quadrature.Start{Mode: found[0].x, Cov: nil, NegHessian: inverse(found[0].cov, d)}, false, true, nil
	}
	total := 0.0
	for _, f := range found {
		total += f.mass
	}
	mean := make([]float64, d)
	for _, f := range found {
		for k := range mean {
			mean[k] += f.mass / total * f.x[k]
		}
	}
	cov := make([]float64, d*d)
	for _, f := range found {
		w := f.mass / total
		for r := 0; r < d; r++ {
			for c := 0; c < d; c++ {
				cov[r*d+c] += w * (f.cov[r*d+c] + (f.x[r]-mean[r])*(f.x[c]-mean[c]))
			}
		}
	}
	return quadrature.Start{Mode: mean, Cov: cov}, true, true, nil
}

// neckCoordinate returns the one parameter fitted on a log or logit
// scale when the model has exactly one and a grid, else -1: where the mode
// search found no mode, the coordinate whose funnel's neck it may have run
// down (quadratureStart).
func (a *analysis) neckCoordinate() int {
	if a.ref.grid == nil {
		return -1
	}
	b := -1
	for k, m := range a.maps {
		if m.Scale.IsIdentity() {
			continue
		}
		if b >= 0 {
			return -1
		}
		b = k
	}
	return b
}

// modeDownANeck reports whether the best mode on the fitting scale has a
// coordinate of a log or logit fitting scale beyond the profile's scan
// (|z| > -profileScanFrom): the mode search ran down a funnel's neck, where
// the density grows without bound, and stopped where its steps became
// too small, not at a mode.
func (a *analysis) modeDownANeck() bool {
	if len(a.modes.fitModes) == 0 {
		return false
	}
	for k, z := range a.modes.fitModes[0].X {
		if !a.maps[k].Scale.IsIdentity() && !(math.Abs(z) < -profileScanFrom) {
			return true
		}
	}
	return false
}

// boundCoordinate returns the one parameter whose coordinate the highest
// mode puts on a bound of its support (infinite on the unconstrained
// scale) or beyond the profile's scan there (a scale fitted on the log
// scale, whose mode search ran down the funnel's neck to tau = 6e-10),
// and the mode's other coordinates on that scale; one is false where no
// parameter or several are so.
func (a *analysis) boundCoordinate(maps []transform.Map) (b int, from []float64, one bool) {
	if len(a.modes.fitModes) == 0 {
		return 0, nil, false
	}
	x := a.modes.fitModes[0].X
	from = make([]float64, a.d)
	b = -1
	for k := range from {
		xo := a.maps[k].ToOriginal(x[k])
		from[k] = maps[k].FromOriginal(xo)
		// Within 1e-9 of the box's width of a bound (the mode search stops
		// a rounding's distance inside: tau = 1.6e-16).
		tol := 1e-9
		if g := a.ref.grid; g != nil {
			n := g.Nodes[k]
			tol *= max(1, math.Abs(a.maps[k].ToOriginal(n[len(n)-1])-a.maps[k].ToOriginal(n[0])))
		}
		prm := a.m.Params[k]
		far := !maps[k].Scale.IsIdentity() && !(math.Abs(from[k]) < -profileScanFrom)
		if far || xo-prm.Lo <= tol || prm.Hi-xo <= tol {
			if b >= 0 {
				return 0, nil, false
			}
			b = k
			from[k] = 0
		}
	}
	return b, from, b >= 0
}

// gridStart returns a start for the nested rule from the scouting grid's
// moments where the density has no mode on the unconstrained scale and
// the fitting scale's mode lies on a bound of the support: the
// means and sds of the unconstrained coordinates under the grid's
// marginals, with the grid's correlations. A hierarchical scale with a
// prior that stays positive at 0 makes the joint density unbounded in the
// funnel's neck (tau -> 0 with the group effects at their mean: on log
// tau the density grows like tau^(1-J) for J groups), while the marginal
// of log tau decays there and the posterior is proper. The rule's pilot
// centres and whitens the main rule from its own moments.
func (a *analysis) gridStart(maps []transform.Map) (quadrature.Start, bool) {
	g := a.ref.grid
	if g == nil || len(g.Stats.Marginals) != a.d || g.Stats.Fitting.Corr == nil {
		return quadrature.Start{}, false
	}
	d := a.d
	mean := make([]float64, d)
	sd := make([]float64, d)
	for k, mg := range g.Stats.Marginals {
		var s0, s1, s2 float64
		for i, m := range mg.Mass {
			z := maps[k].FromOriginal(g.Maps[k].ToOriginal(g.Nodes[k][i]))
			if math.IsNaN(z) || math.IsInf(z, 0) || !(m > 0) {
				continue // a node on a bound of the support
			}
			s0 += m
			s1 += m * z
			s2 += m * z * z
		}
		if !(s0 > 0) {
			return quadrature.Start{}, false
		}
		mean[k] = s1 / s0
		sd[k] = math.Sqrt(max(0, s2/s0-mean[k]*mean[k]))
		if !(sd[k] > 0) {
			return quadrature.Start{}, false
		}
	}
	cov := make([]float64, d*d)
	for r := 0; r < d; r++ {
		for c := 0; c < d; c++ {
			cov[r*d+c] = g.Stats.Fitting.Corr[r][c] * sd[r] * sd[c]
		}
	}
	if !(inverse(cov, d) != nil) {
		return quadrature.Start{}, false
	}
	return quadrature.Start{Mode: mean, Cov: cov, NoMode: true}, true
}

// startInside returns the unconstrained point of a mode x on the fitting
// scale, from which to polish it there. A coordinate on a bound of the
// support (a mode the fitting scale puts on the bound, as a Student t's
// degrees of freedom at their lower limit of 1) maps to infinity; it starts
// one grid spacing inside instead, where the Newton search on the
// unconstrained scale, whose Jacobian vanishes at the bound, finds the
// mode there.
func (a *analysis) startInside(x []float64, maps []transform.Map) []float64 {
	z0 := make([]float64, a.d)
	for k := range z0 {
		xo := a.maps[k].ToOriginal(x[k])
		z0[k] = maps[k].FromOriginal(xo)
		if !math.IsInf(z0[k], 0) || a.ref.grid == nil {
			continue
		}
		step := a.ref.grid.Spacing(k)
		if z0[k] < 0 {
			xo = a.maps[k].ToOriginal(x[k] + step)
		} else {
			xo = a.maps[k].ToOriginal(x[k] - step)
		}
		z0[k] = maps[k].FromOriginal(xo)
	}
	return z0
}

// polished is a mode on the unconstrained scale: the point, log p there,
// the inverse of the negative Hessian and the Laplace estimate of its mass
// (up to a common factor).
type polished struct {
	x    []float64
	logP float64
	cov  []float64
	mass float64
}

// polish runs the Newton search from z0 on the unconstrained scale; ok is
// false where it finds no mode with a positive definite curvature.
func (a *analysis) polish(p *transform.Density, z0 []float64) (polished, bool, error) {
	d := a.d
	for _, v := range z0 {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return polished{}, false, nil
		}
	}
	ms, err := fit.FindModes(a.ctx, p, [][]float64{z0}, nil, nil)
	if err != nil {
		if ctxErr := a.ctx.Err(); ctxErr != nil {
			return polished{}, false, ctxErr
		}
		return polished{}, false, nil
	}
	if len(ms) == 0 || !ms[0].PositiveDefinite || !ms[0].Converged {
		return polished{}, false, nil
	}
	nh := make([]float64, d*d)
	for r := 0; r < d; r++ {
		for c := 0; c < d; c++ {
			nh[r*d+c] = -ms[0].Hess.At(r, c)
		}
	}
	cov := inverse(nh, d)
	if cov == nil {
		return polished{}, false, nil
	}
	var ch mat.Cholesky
	if !ch.Factorize(mat.NewSymDense(d, append([]float64(nil), cov...))) {
		return polished{}, false, nil
	}
	// Laplace: p(mode) (2 pi)^(d/2) det(cov)^(1/2); the constant cancels.
	logMass := ms[0].LogDensity + ch.LogDet()/2
	return polished{x: ms[0].X, logP: ms[0].LogDensity, cov: cov, mass: logMass}, true, nil
}

// seen reports whether m is one of found: within 1e-3 of its sds.
func seen(found []polished, m polished) bool {
	d := len(m.x)
	for _, f := range found {
		same := true
		for k := 0; k < d; k++ {
			if math.Abs(f.x[k]-m.x[k]) > 1e-3*math.Sqrt(f.cov[k*d+k]) {
				same = false
			}
		}
		if same {
			return true
		}
	}
	return false
}

// wideStarts polishes space-filling starts (a Halton sequence) over a wide
// box on the unconstrained scale, ten sds of the best mode on each side,
// besides the grid's peaks: a mode they find that is higher than the
// search's best by more than rounding is reported (the search's best point
// was not the global optimum), and every new mode joins the rule's start.
func (a *analysis) wideStarts(p *transform.Density, found []polished) ([]polished, error) {
	d := a.d
	best := found[0]
	for _, f := range found {
		if f.logP > best.logP {
			best = f
		}
	}
	bestBefore := best
	n := 12 * d
	primes := [4]float64{2, 3, 5, 7}
	z := make([]float64, d)
	for i := 1; i <= n; i++ {
		for k := 0; k < d; k++ {
			u := halton(i, primes[k])
			half := 10 * max(math.Sqrt(best.cov[k*d+k]), 0.3)
			z[k] = best.x[k] + (2*u-1)*half
		}
		m, ok, err := a.polish(p, z)
		if err != nil {
			return nil, err
		}
		if ok && !seen(found, m) {
			found = append(found, m)
		}
		a.tr.beat() // 48 searches in 4-D: a pause point between them
	}
	for _, f := range found {
		if f.logP > best.logP {
			best = f
		}
	}
	if best.logP > bestBefore.logP+1e-9*(1+math.Abs(bestBefore.logP)) {
		x := make([]float64, d)
		for k := range x {
			x[k] = a.maps[k].FromOriginal(p.Maps()[k].ToOriginal(best.x[k]))
		}
		a.diag.add(CodeStartsDisagree, SeverityWarning,
			"Starts spread over a wide region found a higher mode, at %s (log p %.6g against %.6g at the mode search's best): the search's best point is not the highest; the exact results cover both.",
			a.pointString(x), best.logP, bestBefore.logP)
	}
	// Masses relative to the largest (Laplace estimates).
	top := math.Inf(-1)
	for _, f := range found {
		top = max(top, f.mass)
	}
	out := found[:0]
	for _, f := range found {
		f.mass = math.Exp(f.mass - top)
		if f.mass > 1e-6 {
			out = append(out, f)
		}
	}
	return out, nil
}

// halton returns the i-th element of the van der Corput sequence in base b.
func halton(i int, b float64) float64 {
	f, r := 1.0, 0.0
	for x := float64(i); x > 0; x = math.Floor(x / b) {
		f /= b
		r += f * math.Mod(x, b)
	}
	return r
}

// inverse returns the inverse of the symmetric positive definite a (d×d).
func inverse(a []float64, d int) []float64 {
	s := mat.NewSymDense(d, append([]float64(nil), a...))
	var ch mat.Cholesky
	if !ch.Factorize(s) {
		return nil
	}
	var inv mat.SymDense
	if ch.InverseTo(&inv) != nil {
		return nil
	}
	out := make([]float64, d*d)
	for r := 0; r < d; r++ {
		for c := 0; c < d; c++ {
			out[r*d+c] = inv.At(r, c)
		}
	}
	return out
}

// takeQuadrature fills the reference's exact results from q and records
// what they cannot stand behind: the grid's checks do not run (their
// verdicts are the grid's), except that a grid that cannot resolve the
// density keeps the comparisons, made on the grid, out.
func (r *reference) takeQuadrature(a *analysis, q *quadrature.Result, maps []transform.Map) error {
	d := a.d
	r.quad, r.quadMaps = q, maps
	// The grid only scouted (or, with the user's points, its resolution
	// decides nothing here): the comparisons use the rule's nodes.
	posInf, layers := a.gridUnresolved()
	gridResolves := posInf == 0 && len(layers) == 0
	a.checkPrecision()
	r.singularImproper = false
	r.tailMass = 0
	r.logZ, r.logZErr = q.LogZ, q.LogZErr
	if q.Improper {
		a.avail.drop(QuantityLogZ, CodeImproper)
		a.avail.drop(QuantityAxisErrors, CodeImproper)
		a.diag.add(CodeImproper, SeverityError,
			"The density does not fall fast enough to be integrable: along some direction its mass per step of the rule's coordinates does not decay, so log Z and the exact moments are not reported.")
		r.logZ, r.logZErr = math.NaN(), math.NaN()
		return nil
	}
	if gridResolves {
		// The singular-bound check reads the grid's layers next to a
		// bound: on a grid that cannot resolve the density they say
		// nothing (a 1/s prior times a likelihood that vanishes at s = 0
		// was reported as growing like s^-5).
		a.adviseSingularBounds()
	}
	// The original scale: the rule's own moments; the fitting scale: per
	// parameter the original (identity fitting scale) or the unconstrained
	// one (the same log or logit), the cross terms from the node set.
	fitting := q.MomentsOf(func(z, y []float64) {
		for k := range z {
			// The fitting scale is the original one or the same log or
			// logit map (no round trip: x rounds to a bound far out).
			y[k] = z[k]
			if a.maps[k].Scale.IsIdentity() {
				y[k] = maps[k].ToOriginal(z[k])
			}
		}
	})
	for k := 0; k < d; k++ {
		src := &q.Unconstrained
		if a.maps[k].Scale.IsIdentity() {
			src = &q.Original
		}
		fitting.MeanInfinite[k] = src.MeanInfinite[k]
		fitting.VarInfinite[k] = src.VarInfinite[k]
		fitting.SkewnessInfinite[k] = src.SkewnessInfinite[k]
		fitting.KurtosisInfinite[k] = src.KurtosisInfinite[k]
	}
	quant := make([][3]float64, d)
	r.curves = make([]*quadrature.Curve, d)
	r.curvesLater = make([]bool, d)
	var unresolvedQuantiles []string
	probs := []float64{0.025, 0.5, 0.975}
	var roughQuantiles []string
	roughest := 0.0
	// The walks' quantiles of each parameter, found once: the looser
	// bound below takes them where the strict one did not.
	type walked struct {
		qs  []float64
		est float64
		err error
	}
	walks := make([]*walked, d)
	walkQuantilesTo := func(k int, tol float64) (float64, bool) {
		if walks[k] == nil {
			qs, est, err := q.WalkQuantiles(k, probs)
			walks[k] = &walked{qs, est, err}
		}
		w := walks[k]
		if w.err != nil || w.qs == nil || w.est > tol {
			return w.est, false
		}
		copy(quant[k][:], w.qs)
		return w.est, true
	}
	walkQuantiles := func(k int) bool {
		_, ok := walkQuantilesTo(k, walkQuantileTol)
		return ok
	}
	for k := 0; k < d; k++ {
		// An inner axis's quantiles come from the rule's own walks along
		// it, summed over the outer nodes (quadrature.WalkQuantiles),
		// where their estimate allows and they are few (walkFirstNodes) or
		// the marginal's own walk would take the rule's step in 3-D or 4-D
		// (a density with no mode: fineCurves), which costs about as much
		// as the rule: no more evaluations of log p. Its marginal's own
		// walk, for the plot, is left to the plots (ruleRanges).
		cheap := q.WalkNodes(k) <= walkFirstNodes || a.costlyCurve(q)
		walked := cheap && walkQuantiles(k)
		if gridResolves && !a.scout && a.ref.grid != nil && q.Points > costlyRulePoints && gridAgrees(a.ref.grid, q, gridAgreeTol) {
			// A costly rule (a thin, bent ridge) beside a full grid that
			// resolves the density: the grid's plots (and quantiles, where
			// the walks' are not to be had), as a walk per marginal would
			// cost about as much as the rule again.
			if !walked {
				quant[k] = a.ref.grid.Stats.Original.Quantiles[k]
			}
			r.gridCurves = true
			continue
		}
		if walked {
			r.curvesLater[k] = true
			continue
		}
		// Otherwise the marginal is walked here, at the rule's nodes along
		// its own axis, each node a rule over the others: the quantiles
		// and the plotted marginal (plots_rule.go) come from it. In 3-D
		// and 4-D the slices take twice the rule's step (see fineCurves).
		cv, err := q.Curve(a.ctx, k, fineCurves(q))
		if err != nil {
			if ctxErr := a.ctx.Err(); ctxErr != nil {
				return ctxErr
			}
			// The walk does not resolve the marginal (quadrature.ErrCurve).
			// The rule's walks along it give them where their estimate
			// allows (a group effect under a scale whose prior is positive
			// at 0: the marginal has a logarithmic peak, the conditional
			// given the scale is normal).
			if walkQuantiles(k) {
				continue
			}
			if cv := a.curveAcrossBox(q, maps, k); cv != nil {
				r.curves[k] = cv
				copy(quant[k][:], cv.Quantiles(probs))
				continue
			}
			// A full grid that resolves the density gives the quantiles
			// (its interpolated marginals: a thin, bent ridge such as a
			// chaotic cost's over a long window, where the walk's slices
			// at twice the rule's step lose the ridge); otherwise they are
			// left out, with the reason.
			if a.scout && (a.ref.grid == nil || gridAgrees(a.ref.grid, q, scoutFarOff)) {
				// The grid only scouted: the full grid is evaluated on its
				// box, and its quantiles and plots stand in where it
				// resolves the density (a chaotic cost's thin ridge, whose
				// slices at twice the rule's step lose it). Where the
				// scouting grid's moments are far from the rule's, the
				// full grid's would not agree either: it is not evaluated,
				// and the scouting grid fails the check below.
				if err := a.fullGrid(); err != nil {
					return err
				}
				posInf, layers := a.gridUnresolved()
				gridResolves = posInf == 0 && len(layers) == 0
			}
			if gridResolves && a.ref.grid != nil && gridAgrees(a.ref.grid, q, gridAgreeTol) {
				quant[k] = a.ref.grid.Stats.Original.Quantiles[k]
				r.gridCurves = true
				continue
			}
			// Last, the rule's walks to a looser estimate, said in a
			// diagnostic (see walkQuantileRoughTol).
			if est, ok := walkQuantilesTo(k, walkQuantileRoughTol); ok {
				roughQuantiles = append(roughQuantiles, a.names[k])
				roughest = max(roughest, est)
				continue
			}
			quant[k] = [3]float64{math.NaN(), math.NaN(), math.NaN()}
			a.avail.dropAt(QuantityQuantiles, k, CodeUnresolved)
			unresolvedQuantiles = append(unresolvedQuantiles, a.names[k])
			continue
		}
		r.curves[k] = cv
		copy(quant[k][:], cv.Quantiles(probs))
	}
	if len(unresolvedQuantiles) > 0 {
		a.diag.add(CodeUnresolved, SeverityWarning,
			"The marginal of %s is far more peaked than its spread (as a funnel's neck): the rule's walk along it does not resolve it, so its quantiles are not reported and its plot is drawn point by point.",
			list(unresolvedQuantiles))
	}
	if len(roughQuantiles) > 0 {
		a.diag.add(CodeGridError, SeverityWarning,
			"The quantiles of %s are less precise than usual: the marginal is too peaked for a walk of its own (a peak far narrower than its spread: a group effect's, or a group mean's, under a scale that may be near 0), so they come from the rule's walks given the other parameters; by their estimate (from the steps h, 2h and 4h) they are off by less than %s of probability.",
			list(roughQuantiles), percent(roughest))
	}
	disputed := a.disputedVariances(q)
	for _, k := range disputed {
		q.Original.VarInfinite[k], q.Original.KurtosisInfinite[k] = false, false
		fitting.VarInfinite[k], fitting.KurtosisInfinite[k] = false, false
		for _, qt := range []Quantity{QuantityVariance, QuantitySkewness, QuantityKurtosis, QuantityAxisErrors} {
			a.avail.dropAt(qt, k, CodeUnresolved)
		}
	}
	if len(disputed) > 0 {
		names := make([]string, len(disputed))
		for i, k := range disputed {
			names[i] = a.names[k]
		}
		a.diag.add(CodeUnresolved, SeverityWarning,
			"The variance of %s is not resolved: around the modes it looks infinite (its share does not fall where the rule's walks end), while over the grid's wider box it settles, so what decides it lies between the two (a faint background far from a narrow peak, say); the exact covariance, skewness and kurtosis of %s and the forward-KL fit are not reported.",
			list(names), list(names))
	}
	r.original = gridMoments(q.Original, d, quant, nil)
	r.fitting = gridMoments(fitting, d, quant, a.maps)
	for k := 0; k < d; k++ {
		if fitting.VarInfinite[k] {
			a.avail.dropAt(QuantityAxisErrors, k, CodeNoVariance)
		}
	}
	return nil
}

// curveAcrossBox walks parameter k's marginal of a 2-D density with the
// other parameter integrated across the scouting grid's box on a lattice
// of the default grid's points (quadrature.CurveAcross), where the slices'
// rules do not resolve it: the banana's y, whose conditional given y far
// out has two peaks with a valley that underflows between them. Before,
// the full grid was evaluated on that box for its quantiles and plots
// (90,601 points against some 16,000 here); the lattice's row sums are
// the full grid's, at the walk's nodes, and the walk's mass must be 1 to
// 1e-4. nil where it does not apply (not 2-D, no scouting grid, a box
// side that maps to no finite coordinate) or does not resolve it.
func (a *analysis) curveAcrossBox(q *quadrature.Result, maps []transform.Map, k int) *quadrature.Curve {
	if a.d != 2 || !a.scout || a.ref.grid == nil {
		return nil
	}
	other := 1 - k
	box := a.ref.grid.Box
	lo := maps[other].FromOriginal(a.maps[other].ToOriginal(box.Lo[other]))
	hi := maps[other].FromOriginal(a.maps[other].ToOriginal(box.Hi[other]))
	if math.IsNaN(lo) || math.IsNaN(hi) || math.IsInf(lo, 0) || math.IsInf(hi, 0) || !(hi > lo) {
		return nil
	}
	cv, err := q.CurveAcross(a.ctx, k, lo, hi, grid.DefaultPoints(a.d))
	if err != nil {
		return nil
	}
	return cv
}

// walkQuantileTol bounds the error estimate of quantiles from the rule's
// walks (quadrature.Result.WalkQuantiles), as a probability, for them to
// be taken: as curveMassTol bounds a marginal's own walk's mass. The
// banana's y, whose walks the outer nodes do not resolve, estimated 5e-3;
// a 3-D normal at the rule's default step 5e-5 (actual errors 1e-6).
const walkQuantileTol = 1e-4

// walkQuantileRoughTol is the looser bound taken where nothing else gives
// a parameter's quantiles (its marginal's own walk fails, and no grid
// resolves the density), with a diagnostic. The estimate is cautious
// (e2^2/e1 where the rules converge): on three group effects under a
// half-Cauchy scale it read 2.6e-4 to 4.3e-4 where the actual errors,
// against an independent quadrature of the conditionally normal effects
// (TestRoughWalkQuantilesAgainstConjugateEffects), were 7e-7 to 1.3e-5;
// on the mean of two non-centred groups it read 1.2e-3 where they were
// 4.9e-5 to 7.7e-4. quadrature's walkScreen lies above it.
const walkQuantileRoughTol = 2e-3

// walkFirstNodes is the most nodes of the rule's walks along a parameter
// for its quantiles to be taken from them before its marginal's own walk
// is tried (quadrature.Result.WalkNodes), where that walk takes twice the
// rule's step. Over more (a 4-D rule's inner lines, 151,000 nodes on the
// counts benchmark, where the quantiles took 42 ms against 15 ms for the
// marginal's walk) the walks serve only where the marginal's own walk
// fails. At the rule's step the marginal's walk costs about a rule (a
// Poisson model with two site effects: 1.6 s for the intercept's, against
// about 0.1 s for its walks' quantiles over 400,000 nodes).
const walkFirstNodes = 20000

// gridAgreeTol bounds the distance between the full grid's means and the
// nested rule's, in the rule's sds, and the relative distance between
// their sds, for the grid's quantiles and plots to stand in for the
// rule's walks (gridAgrees).
const gridAgreeTol = 0.05

// gridAgrees reports whether the grid's moments on the original scale
// agree with the nested rule's within tol (gridAgreeTol for the full
// grid's quantiles and plots to stand in for marginals the rule's walks do
// not resolve; scoutFarOff for the scouting grid's, below which the full
// grid is worth evaluating). A grid that resolves no layer can still be
// far off where its box chased a funnel's neck or tail (a Poisson model
// with two site effects under a half-normal sd: the grid's median of an
// effect was 1.2 where the rule's mean was 0.42 and its sd 0.7).
func gridAgrees(g *grid.Grid, q *quadrature.Result, tol float64) bool {
	d := q.Dim
	gm := &g.Stats.Original
	for k := 0; k < d; k++ {
		if q.Original.VarInfinite[k] || q.Original.MeanInfinite[k] {
			continue
		}
		sd := math.Sqrt(q.Original.Cov[k*d+k])
		if !(math.Abs(gm.Mean[k]-q.Original.Mean[k]) <= tol*sd) || !(math.Abs(gm.SD[k]/sd-1) <= tol) {
			return false
		}
	}
	return true
}

// scoutFarOff is the distance between the scouting grid's moments and the
// rule's (in the rule's sds, and relative for the sds) beyond which the
// full grid on the scouting box is not evaluated for a marginal the rule's
// walks do not resolve: its own moments then stayed beyond gridAgreeTol on
// every such case seen. A 4-D non-centred hierarchical model (scouting
// grid 3.6e5 off, full grid 98) spent 0.5 s of its 1.3 s on a 41^4 grid it
// could not use, the 3-D funnel (3.0, then 3.0) and three group effects
// under a half-Cauchy sd (1.10, then 1.10) likewise; a chaotic cost's
// (0.010, then 2e-5) gives its quantiles and plots.
const scoutFarOff = 1

// fullGrid evaluates the default grid on the scouting grid's box (with
// the reference stage's widening and narrowing), for what the rule's walks
// do not resolve; the reference's grid, box and edge shares become its.
func (a *analysis) fullGrid() error {
	a.scout = false
	if err := a.evaluateGrid(); err != nil {
		return err
	}
	st := &a.ref.grid.Stats
	a.ref.edgeMass, a.ref.nonFinite, a.ref.tailMass = st.EdgeMass, st.NonFinite, 0
	a.tr.enter(stageExact)
	return nil
}

// fineCurves reports whether the marginals' slices take the rule's own
// step (else twice it): up to 2-D. A walk along one parameter with a rule
// over the others at every node costs about as much as the whole rule at
// the same step, so d walks at the rule's step cost d rules; at twice the
// step, 2^(d-1) times less. At twice the step a slice's trapezoid sum
// over a normal conditional is 2.05e-4 high per axis (measured); the bias
// is common to the walk's nodes, so it cancels in the quantiles and the
// plotted marginal, both taken over the walk's own mass (Curve): the 3-D
// reference cases' quantiles moved by 6e-5 sd at most (the sensor's),
// the plotted normal marginals by 2e-13 of their peak, against slices at
// the rule's step, while the 3-D sensor benchmark took 1.3 times less
// time. (The 40-reading Lorenz-63 cost's marginals at the rule's step
// took 30 s.) A density with no mode on the unconstrained scale (a
// hierarchical scale on its bound) takes the rule's step too: there the
// slices at twice the step follow the funnel's neck less well, and the
// two-schools model's mean had its 2.5 % quantile 5 % of an sd off
// (-5.204 against -5.513 by a quadrature of ours), at the rule's step
// 7e-5 sd.
func fineCurves(q *quadrature.Result) bool {
	return q.Dim <= 2 || q.NoMode()
}

// costlyCurve reports whether a marginal's own walk takes the rule's step
// in 3-D or 4-D (a density with no mode: fineCurves), where it costs
// about as much as the rule.
func (a *analysis) costlyCurve(q *quadrature.Result) bool { return a.d > 2 && fineCurves(q) }

// disputedVariances lists the parameters whose variance the nested rule
// finds infinite while the grid, over a box that reaches further on the
// original scale, sees it settle (its tail share is small and no face of
// its box stopped at the cap with mass left): the rule's tail check ends
// its walks where the density's own share is negligible, so a moment
// decided by mass beyond them (a faint background far from a narrow
// spike, whose x^2 outweighs the spike's) looks infinite to it. Neither
// resolves such a variance. The grid speaks only where it resolves the
// parameter (no layer of it holds most of the mass): a scouting grid whose
// box the search ran out to 1e8 over a Student t's tail (the normal mean
// from three readings with a 1/s prior, whose variance is infinite) puts
// the mass in one layer, and its small tail share says nothing.
func (a *analysis) disputedVariances(q *quadrature.Result) []int {
	gst := &a.ref.grid.Stats
	posInf, layers := a.gridUnresolved()
	if posInf > 0 {
		return nil
	}
	var out []int
	for k := 0; k < a.d; k++ {
		if !q.Original.VarInfinite[k] || !(gst.Original.TailShare[k] <= tailShareAbsent) {
			continue
		}
		if slices.ContainsFunc(layers, func(l unresolvedLayer) bool { return l.axis == k }) {
			continue
		}
		capped := false
		for side := 0; side < 2; side++ {
			capped = capped || (a.ref.box.Capped[k][side] && a.ref.edgeMass[k][side] > improperEdgeMass)
		}
		if !capped {
			out = append(out, k)
		}
	}
	return out
}

// gridMoments returns m in the reference's form; the tail shares say
// "does not settle" (+Inf) where the rule found the moment infinite, 0
// elsewhere. Quantiles are on the original scale, mapped by maps when set.
func gridMoments(m quadrature.Moments, d int, quant [][3]float64, maps []transform.Map) grid.Moments {
	g := grid.Moments{
		Mean: m.Mean, MeanErr: m.MeanErr, Skewness: slices.Clone(m.Skewness), ExcessKurtosis: slices.Clone(m.ExcessKurtosis),
		Cov: make([][]float64, d), CovErr: make([][]float64, d), SD: make([]float64, d), Corr: make([][]float64, d),
		Quantiles: make([][3]float64, d), TailShare: make([]float64, d), AbsTailShare: make([]float64, d),
		KurtosisTailShare: make([]float64, d),
	}
	for k := 0; k < d; k++ {
		g.Cov[k], g.CovErr[k] = m.Cov[k*d:(k+1)*d], m.CovErr[k*d:(k+1)*d]
		g.SD[k] = math.Sqrt(m.Cov[k*d+k])
		for i, v := range quant[k] {
			if maps != nil {
				v = maps[k].FromOriginal(v)
			}
			g.Quantiles[k][i] = v
		}
		if m.VarInfinite[k] {
			g.TailShare[k] = math.Inf(1)
		}
		if m.MeanInfinite[k] {
			g.AbsTailShare[k] = math.Inf(1)
		}
		if m.KurtosisInfinite[k] {
			g.KurtosisTailShare[k] = math.Inf(1)
			g.ExcessKurtosis[k] = math.NaN()
		}
		if m.SkewnessInfinite[k] {
			// The third moment does not settle (nor does the fourth):
			// no skewness, on either scale (the fitting scale's moments
			// take the unconstrained scale's verdicts, not its values).
			g.Skewness[k] = math.NaN()
		}
	}
	for k := 0; k < d; k++ {
		g.Corr[k] = make([]float64, d)
		for l := 0; l < d; l++ {
			g.Corr[k][l] = m.Cov[k*d+l] / (g.SD[k] * g.SD[l])
		}
	}
	return g
}
