package engine

import (
	"fmt"
	"math"
	"slices"

	"bellcheck/engine/grid"
	"bellcheck/engine/quadrature"
	"bellcheck/engine/transform"
)

// reference is what the reference stage hands on: the exact posterior on
// the fitting and the original scale, its error estimates, and the
// verdicts of the stage's checks. The stages after it read the exact
// posterior only through these fields and the method improper, never the
// grid's statistics, so another quadrature can take the stage's place.
// Its contract:
//   - fill every field below; grid serves the mode search (its peaks and
//     box), the comparison (compare.Compare) and the plots (its nodes,
//     marginals and pairs);
//   - record in a.avail what it cannot stand behind: dropUnresolved where
//     it does not resolve the density, log Z where the density is not
//     integrable, the divergences where log p is rounding noise, and per
//     axis the fits' mean errors and sd ratios (QuantityAxisErrors) where
//     the variance does not settle;
//   - say why in a.diag, with the codes those records name.
type reference struct {
	// grid is the evaluated grid on the fitting scale; read-only.
	grid *grid.Grid
	// box tells which faces the box search fixed (on a bound of the
	// support, or set by the user) and which it capped.
	box grid.BoxResult

	// logZ is log of the integral of p over the box, logZErr its error
	// estimate and tailMass the share of the mass estimated beyond the box.
	logZ, logZErr, tailMass float64
	// fitting and original are the moments on the fitting and on the
	// original scale; their error estimates are scaled up where the
	// density is infinite at a bound (checkSingularBounds).
	fitting, original grid.Moments
	// edgeMass[k][side] is the share of the mass in the outermost layer
	// of nodes at that face; nonFinite the share of nodes where log p is
	// NaN or +Inf.
	edgeMass  [][2]float64
	nonFinite float64
	// exactMode is the node where the density on the original scale is
	// highest, on the fitting scale.
	exactMode []float64

	// singularImproper reports a density that grows too fast towards a
	// bound of its support to be integrable (like 1/x).
	singularImproper bool
	// noise is the spacing of doubles at the grid's highest log p where it
	// exceeds precisionWarn: the rounding noise of log p (0 otherwise).
	noise float64

	// quad, when set, is the nested rule whose results replaced the
	// grid's (stage_quadrature.go): its verdicts on the tails stand.
	quad *quadrature.Result
	// quadMaps are the maps from the rule's unconstrained scale to the
	// original one, per parameter (set with quad).
	quadMaps []transform.Map
	// boxNotes are what the box search and the grid's evaluation have to
	// say about the box: reported where the grid's results stand, not
	// where the nested rule's do (the grid only scouted).
	boxNotes diagnostics
	// severalModes reports a rule started from several modes (the mean
	// and covariance of their mixture).
	severalModes bool
	// curves are the rule's marginals, per parameter (nil where the walk
	// failed): the quantiles and the plotted marginals.
	curves []*quadrature.Curve
	// curvesLater marks the marginals whose quantiles came from the rule's
	// walks along them: their own walks are left to the plots.
	curvesLater []bool
	// gridCurves reports a marginal the rule's walk did not resolve while
	// the full grid does: its quantiles and the plots come from the grid.
	gridCurves bool
}

// findReference is the reference stage: it finds the box, evaluates the
// grid, checks what the grid resolves and summarises it.
func (a *analysis) findReference() error {
	a.ref = &reference{}
	if err := a.findBox(); err != nil {
		return err
	}
	if err := a.evaluateGrid(); err != nil {
		return err
	}
	a.ref.summarise()
	if useQuadrature {
		// The checks wait for the nested rule (stage_quadrature.go):
		// where it stands, the grid's verdicts on the exact results do not.
		return nil
	}
	a.checkReference()
	return nil
}

// checkReference records what the grid's exact results cannot stand
// behind.
func (a *analysis) checkReference() {
	a.checkResolved()
	a.ref.scaleErrors(a.checkSingularBounds())
	a.checkPrecision()
	a.checkTails()
}

// summarise copies the grid's statistics into the reference's fields; the
// grid's own statistics stay as computed.
func (r *reference) summarise() {
	st := &r.grid.Stats
	r.logZ, r.logZErr, r.tailMass = st.LogZ, st.LogZErr, st.TailMass
	r.fitting, r.original = cloneMoments(st.Fitting), cloneMoments(st.Original)
	r.edgeMass, r.nonFinite = st.EdgeMass, st.NonFinite
	r.exactMode = make([]float64, r.grid.Dim)
	r.grid.Point(st.OrigArgMax, r.exactMode)
}

// scaleErrors scales the error estimates of log Z and of the moments by
// errScale.
func (r *reference) scaleErrors(errScale float64) {
	if errScale > 1 {
		r.logZErr *= errScale
		for _, m := range []*grid.Moments{&r.fitting, &r.original} {
			for k := range m.MeanErr {
				m.MeanErr[k] *= errScale
				for l := range m.CovErr[k] {
					m.CovErr[k][l] *= errScale
				}
			}
		}
	}
}

// cloneMoments returns a copy of m that shares no slice with it.
func cloneMoments(m grid.Moments) grid.Moments {
	return grid.Moments{
		Mean: slices.Clone(m.Mean), MeanErr: slices.Clone(m.MeanErr),
		Cov: copyRows(m.Cov), CovErr: copyRows(m.CovErr),
		SD: slices.Clone(m.SD), Corr: copyRows(m.Corr),
		Quantiles: slices.Clone(m.Quantiles),
		Skewness:  slices.Clone(m.Skewness), ExcessKurtosis: slices.Clone(m.ExcessKurtosis),
		TailShare: slices.Clone(m.TailShare), AbsTailShare: slices.Clone(m.AbsTailShare),
		KurtosisTailShare: slices.Clone(m.KurtosisTailShare),
	}
}

// reach is how far the box may widen on the fitting scale: where x(z)
// rounds onto a bound of the support (transform.Map.Reach).
func (a *analysis) reach() grid.Box {
	r := grid.Box{Lo: make([]float64, a.d), Hi: make([]float64, a.d)}
	for k, m := range a.maps {
		r.Lo[k], r.Hi[k] = m.Reach()
	}
	return r
}

// findBox finds the grid's box on the fitting scale.
func (a *analysis) findBox() error {
	a.tr.enter(stageBox)
	res, err := grid.FindBox(a.ctx, a.p, grid.BoxSettings{
		Bounds:   a.bounds,
		Reach:    a.reach(),
		Pinned:   a.pinned,
		Points:   a.points(),
		Progress: a.tr.at,
	})
	if err != nil {
		if ctxErr := a.ctx.Err(); ctxErr != nil {
			return ctxErr
		}
		return fmt.Errorf("engine: finding the box: %w", err)
	}
	a.ref.box = res
	if !res.Converged {
		a.ref.boxNotes.add(CodeBoxNotSettled, SeverityWarning,
			"The search for the box stopped after %d grids before the box settled; the exact results may miss mass.", res.Iterations)
	}
	return nil
}

// free reports the faces the box search may move (not on a bound of the
// support, not set by the user).
func (a *analysis) free() [][2]bool {
	f := make([][2]bool, a.d)
	for k := range f {
		f[k] = [2]bool{!a.ref.box.Fixed[k][0], !a.ref.box.Fixed[k][1]}
	}
	return f
}

// gridOn evaluates the grid on box with the analysis's settings; a
// cancelled context comes back as its own error.
func (a *analysis) gridOn(box grid.Box) (*grid.Grid, error) {
	g, err := grid.Evaluate(a.ctx, a.p, box, grid.Settings{
		Points:   a.points(),
		Maps:     a.maps,
		Free:     a.free(),
		Progress: a.tr.at,
	})
	if err != nil {
		if ctxErr := a.ctx.Err(); ctxErr != nil {
			return nil, ctxErr
		}
		return nil, fmt.Errorf("engine: evaluating the grid: %w", err)
	}
	return g, nil
}

// evaluateGrid evaluates the grid on the box found, widening a face the
// fine grid shows mass at and narrowing a box stretched over faint tails.
func (a *analysis) evaluateGrid() error {
	a.tr.enter(stageGrid)
	g, err := a.gridOn(a.ref.box.Box)
	if err != nil {
		return err
	}
	// The coarse search can miss thin structures (a curved ridge leaving
	// through a face); the fine grid shows them. Widen such a face by half
	// the box's width, once.
	retry := false
	box := g.Box.Clone()
	for k := 0; k < a.d; k++ {
		w := box.Hi[k] - box.Lo[k]
		for side := 0; side < 2; side++ {
			if a.ref.box.Fixed[k][side] || a.ref.box.Capped[k][side] || g.Stats.EdgeMass[k][side] <= refineEdgeMass {
				continue
			}
			retry = true
			if side == 0 {
				box.Lo[k] = max(box.Lo[k]-w/2, a.bounds.Lo[k])
			} else {
				box.Hi[k] = min(box.Hi[k]+w/2, a.bounds.Hi[k])
			}
		}
	}
	if retry {
		g2, err := a.gridOn(box)
		if err != nil {
			return err
		}
		g = g2
		a.ref.box.Box = box
	}
	// A box stretched over faint tails (a funnel, a heavy tail) can leave
	// the centre under-resolved. Then trim each free side to where
	// trimTail of the mass lies beyond it, where that narrows an axis by
	// 30 % or more, and keep the grid whose error estimate (half resolution
	// plus the mass beyond the box) is smaller. A scouting grid is coarse
	// by design and serves no results of its own: it is not trimmed (where
	// the rule does not stand, the full grid that replaces it is).
	if coarse(g) && !a.scout {
		box := g.Box.Clone()
		var names []string
		for k := 0; k < a.d; k++ {
			mass := g.Stats.Marginals[k].Mass
			n := len(mass)
			lo, hi := 0, n-1
			acc := 0.0
			for i := 0; i < n; i++ {
				if acc += mass[i]; acc > trimTail {
					lo = max(i-2, 0)
					break
				}
			}
			acc = 0
			for i := n - 1; i >= 0; i-- {
				if acc += mass[i]; acc > trimTail {
					hi = min(i+2, n-1)
					break
				}
			}
			nl, nh := box.Lo[k], box.Hi[k]
			if !a.ref.box.Fixed[k][0] {
				nl = g.Nodes[k][lo]
			}
			if !a.ref.box.Fixed[k][1] {
				nh = g.Nodes[k][hi]
			}
			if nh-nl < 0.7*(box.Hi[k]-box.Lo[k]) && nl < nh {
				box.Lo[k], box.Hi[k] = nl, nh
				names = append(names, a.names[k])
			}
		}
		if len(names) > 0 {
			// A narrower grid that fails to evaluate leaves the first one.
			g2, err := a.gridOn(box)
			if err != nil {
				if a.ctx.Err() != nil {
					return err
				}
			} else if errEstimate(g2) < errEstimate(g) {
				g = g2
				a.ref.box.Box = box
				a.ref.boxNotes.add(CodeEdgeMass, SeverityWarning,
					"The box reached so far into faint tails that the grid could not resolve the centre; it was narrowed along %s to where about %.0g of the mass lies beyond each side, and the exact results are those of that box.",
					list(names), trimTail)
			}
		}
	}
	a.ref.grid = g
	return nil
}

// trimTail is the share of the mass left beyond each side when a box is
// narrowed for resolution.
const trimTail = 1e-8

// coarse reports a grid whose half-resolution error estimate is large.
func coarse(g *grid.Grid) bool {
	st := &g.Stats
	if st.LogZErr > logZErrWarn {
		return true
	}
	f := &st.Fitting
	for k := range f.Mean {
		if f.MeanErr[k] > 10*meanErrWarn*f.SD[k] || f.CovErr[k][k] > 5*varErrWarn*f.Cov[k][k] {
			return true
		}
	}
	return false
}

// errEstimate is the grid's error estimate of log Z: the change at half
// resolution plus the mass estimated beyond the box.
func errEstimate(g *grid.Grid) float64 {
	return g.Stats.LogZErr + g.Stats.TailMass
}

// refineEdgeMass is the edge mass of the fine grid above which a free face
// is widened and the grid evaluated again.
const refineEdgeMass = 1e-8

// unresolvedShare is the share of the mass in a single layer of grid nodes
// (one node of a marginal) above which the grid is taken not to resolve the
// density along that axis. A normal density whose sd is 0.8 node spacings
// puts 0.5 of its mass in the central layer; the box search makes the
// spacing a small fraction of the sd (the default 4-D grid puts 0.14 in it).
const unresolvedShare = 0.5

// checkResolved decides whether the grid resolves the density: it does not
// where log p is +Inf at a node (an overflow, or an infinite spike that a
// node hit) or where one layer of nodes across an axis holds more than
// unresolvedShare of the mass (a spike, or a peak or the neck of a funnel
// narrower than the spacing). Then log Z, the exact moments and the
// comparisons are absent.
func (a *analysis) checkResolved() {
	posInf, layers := a.gridUnresolved()
	if posInf > 0 {
		a.avail.dropUnresolved()
		a.diag.add(CodeUnresolved, SeverityError,
			"The log-density is +inf at %d of the grid points: the density is infinite there (an overflow, or a singularity), which a grid cannot integrate, so log Z, the exact moments and the fits' comparisons with them are not reported.", posInf)
		return
	}
	g := a.ref.grid
	for _, l := range layers {
		a.avail.dropUnresolved()
		k := l.axis
		at := a.names[k]
		if x := a.maps[k].ToOriginal(g.Nodes[k][l.node]); !math.IsInf(x, 0) {
			at = fmt.Sprintf("%s = %.4g", a.names[k], x)
		}
		a.diag.add(CodeUnresolved, SeverityError,
			"The grid's layer at %s holds %s of the mass: the density has a peak (or an infinite spike, or the neck of a funnel) narrower than the grid's spacing along %s, so log Z, the exact moments and the fits' comparisons with them are not reported.",
			at, percent(l.share), a.names[k])
	}
}

// unresolvedLayer is a layer of grid nodes across axis that holds share of
// the mass, more than unresolvedShare.
type unresolvedLayer struct {
	axis, node int
	share      float64
}

// gridUnresolved returns what keeps the grid from resolving the density:
// the number of nodes where log p is +Inf (then no layers), or the layers
// that hold most of the mass (none at a face the box search capped: mass
// piled there is an improper density, which gridDiagnostics reports).
func (a *analysis) gridUnresolved() (posInf int, layers []unresolvedLayer) {
	g := a.ref.grid
	for _, v := range g.LogP {
		if math.IsInf(v, 1) {
			posInf++
		}
	}
	if posInf > 0 {
		return posInf, nil
	}
	for k := 0; k < a.d; k++ {
		mass := g.Stats.Marginals[k].Mass
		top := 0
		for i, m := range mass {
			if m > mass[top] {
				top = i
			}
		}
		if edge := top == 0 || top == len(mass)-1; edge && a.ref.box.Capped[k][min(top, 1)] {
			continue
		}
		if mass[top] > unresolvedShare {
			layers = append(layers, unresolvedLayer{k, top, mass[top]})
		}
	}
	return 0, layers
}

// Precision limits: log p values whose doubles lie more than precisionWarn
// apart carry rounding noise of that relative size in p; beyond
// precisionAbsent the divergences, which compare p and q point by point,
// are noise and are not reported.
const (
	precisionWarn   = 1e-6
	precisionAbsent = 1e-3
)

// checkPrecision reports a log-density so large in magnitude at its
// highest (a huge constant inside the model, as (log x - 1e8)^2/8) that
// double precision no longer resolves its shape finely.
func (a *analysis) checkPrecision() {
	m := math.Abs(a.ref.grid.Max)
	ulp := math.Nextafter(m, math.Inf(1)) - m
	if !(ulp > precisionWarn) {
		return
	}
	a.ref.noise = ulp
	what := "divergences near zero are noise and negative ones are not reported"
	if ulp > precisionAbsent {
		what = "the divergences and Hellinger distances are noise and are not reported"
		for _, q := range []Quantity{QuantityKLqp, QuantityKLpq, QuantityHellinger} {
			a.avail.drop(q, CodeLostPrecision)
		}
	}
	a.diag.add(CodeLostPrecision, SeverityWarning,
		"log p is about %.3g at its highest, where doubles lie %.2g apart: the density carries rounding noise of that size in log p, so %s; move the large constant out of the model (log p needs only be right up to a constant).",
		a.ref.grid.Max, ulp, what)
}

// nonIntegrableSlope is the slope of log density against log distance to a
// bound below which the density counts as not integrable there (-1 is the
// limit; the slope comes from four nodes).
const nonIntegrableSlope = -0.97

// singularBound is a face on a bound of the support towards which the
// density grows without bound, like a power slope of the distance.
type singularBound struct {
	k, side int
	bound   float64
	slope   float64
}

// singularBounds looks at each face of the grid's box that lies on a bound
// of the support for a density that grows without bound towards it, as
// x^(a-1) with a < 1 (Beta and Gamma densities with shape below 1): the
// slope of the log marginal density against the log distance over the
// four nodes nearest the bound, where the slope from nodes 1-2 matches
// that from nodes 4-8, as a power law's does.
func (a *analysis) singularBounds() []singularBound {
	st := &a.ref.grid.Stats
	var out []singularBound
	for k := 0; k < a.d; k++ {
		dens := st.Marginals[k].Density
		n := len(dens)
		for side := 0; side < 2; side++ {
			if !a.ref.box.Fixed[k][side] || a.pinned[k][side] || n < 16 {
				continue
			}
			at := func(i int) float64 {
				if side == 1 {
					return dens[n-1-i]
				}
				return dens[i]
			}
			// Least squares of log dens(i h) on log i, i = 1..4.
			var su, sv, suu, suv float64
			ok := true
			for i := 1; i <= 4; i++ {
				j := i
				if side == 1 {
					j = n - 1 - i
				}
				if !(dens[j] > 0) || math.IsInf(dens[j], 0) {
					ok = false
					break
				}
				u, v := math.Log(float64(i)), math.Log(dens[j])
				su, sv, suu, suv = su+u, sv+v, suu+u*u, suv+u*v
			}
			if !ok {
				continue
			}
			slope := (4*suv - su*sv) / (4*suu - su*su)
			if !(slope < -0.1) {
				continue
			}
			// A power law keeps its slope from nodes 1-2 to nodes 4-8; the
			// falling side of a peak narrower than the spacing steepens.
			s12 := math.Log(at(2)/at(1)) / math.Ln2
			s48 := math.Log(at(8)/at(4)) / math.Ln2
			if !(math.Abs(s12-s48) < 0.25) {
				continue
			}
			bound := a.m.Params[k].Lo
			if side == 1 {
				bound = a.m.Params[k].Hi
			}
			out = append(out, singularBound{k: k, side: side, bound: bound, slope: slope})
		}
	}
	return out
}

// checkSingularBounds acts on the grid's singular bounds (singularBounds).
// The grid's rule misses the mass next to such a bound at the order h^a,
// so the change from half resolution, E(2h) - E(h) = (2^a - 1) E(h),
// understates the error E(h): it returns the factor 1 / (2^a - 1) (1 where
// no face is singular) by which the error estimates of log Z and the
// moments are scaled. A slope of -1 or below is not integrable: the
// density is improper.
func (a *analysis) checkSingularBounds() (errScale float64) {
	sides := [2]string{"lower", "upper"}
	worst := 1.0
	for _, sb := range a.singularBounds() {
		if sb.slope < nonIntegrableSlope {
			// Like 1/x or steeper: not integrable at the bound.
			a.ref.singularImproper = true
			a.avail.drop(QuantityLogZ, CodeImproper)
			a.diag.add(CodeImproper, SeverityError,
				"The density grows towards the %s bound of %s (%g) like a power %.2g of the distance, too fast to be integrable there: the density looks improper, so log Z and the exact moments are not reported.",
				sides[sb.side], a.names[sb.k], sb.bound, sb.slope)
			continue
		}
		order := max(1+sb.slope, 0.05)
		f := 1 / (math.Pow(2, order) - 1)
		worst = max(worst, f)
		a.diag.add(CodeInfiniteAtBound, SeverityWarning,
			"The density grows without bound towards the %s bound of %s (%g), like a power %.2g of the distance: the grid resolves this poorly, so its error estimates were scaled up %.2g times; fit %s on the log or logit scale, where it is smooth.",
			sides[sb.side], a.names[sb.k], sb.bound, sb.slope, f, a.names[sb.k])
	}
	return worst
}

// adviseSingularBounds says, where the nested rule's results stand, which
// bounds the density grows without bound towards (singularBounds): the
// rule integrates on the log or logit scale, where such a density is
// smooth, but the fits on the original scale cannot describe it, so the
// advice to fit on that scale stays. Whether the density is integrable
// there is the rule's verdict (its tail check on the unconstrained scale).
func (a *analysis) adviseSingularBounds() {
	sides := [2]string{"lower", "upper"}
	for _, sb := range a.singularBounds() {
		if !a.maps[sb.k].Scale.IsIdentity() {
			continue
		}
		a.diag.add(CodeInfiniteAtBound, SeverityWarning,
			"The density grows without bound towards the %s bound of %s (%g), like a power %.2g of the distance: the exact results come from a rule on the log or logit scale, where it is smooth, but no Gaussian on this scale describes it; fit %s on the log or logit scale.",
			sides[sb.side], a.names[sb.k], sb.bound, sb.slope, a.names[sb.k])
	}
}

// checkTails decides, per parameter on the fitting scale, whether the
// variance has settled: where it has not (or the grid does not resolve the
// density, or the axis is improper), the fits' mean errors and sd ratios
// along it are absent, and so is the forward-KL fit.
func (a *analysis) checkTails() {
	st := &a.ref.grid.Stats
	for k := 0; k < a.d; k++ {
		switch {
		case !a.avail.resolved():
			a.avail.dropAt(QuantityAxisErrors, k, CodeUnresolved)
		case a.ref.improper(k):
			a.avail.dropAt(QuantityAxisErrors, k, CodeImproper)
		case st.Fitting.TailShare[k] > tailShareAbsent || !(st.Fitting.SD[k] > 0):
			a.avail.dropAt(QuantityAxisErrors, k, CodeNoVariance)
		}
	}
}

// improper reports an axis whose box search stopped at its cap with more
// than improperEdgeMass in the outer layer of a face, and every axis of a
// density that is not integrable at a bound of its support.
func (r *reference) improper(k int) bool {
	if r.quad != nil {
		return r.quad.Improper
	}
	if r.singularImproper {
		return true
	}
	for side := 0; side < 2; side++ {
		if r.box.Capped[k][side] && r.edgeMass[k][side] > improperEdgeMass {
			return true
		}
	}
	return false
}
