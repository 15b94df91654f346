package engine

import (
	"context"
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"bellcheck/engine/compare"
	"bellcheck/engine/eval"
	"bellcheck/engine/fit"
	"bellcheck/engine/grid"
	"bellcheck/engine/model"
	"bellcheck/engine/target"
	"bellcheck/engine/transform"
)

// Errors of Analyse; the fits' and the grid's own errors are wrapped.
var (
	// ErrNoModel means a nil model or one without parameters.
	ErrNoModel = errors.New("engine: no model")
	// ErrOptions means options that do not fit the model: a scale that
	// does not suit a parameter's support, a box outside the support.
	ErrOptions = errors.New("engine: bad options")
)

// Analyse computes the exact posterior on a grid, the three Gaussian fits and
// their comparison for a checked model. It stops soon after ctx is cancelled
// and returns ctx's error. progress may be nil.
//
// The stages: compile the model; wrap it on the fitting scale of each
// parameter (Options.Params[i].Scale: log or logit, with the log-Jacobian);
// find the box (grid.FindBox) unless the user set it; evaluate the grid
// (grid.Evaluate); search the modes from the grid's local maxima that hold
// at least 1e-3 of the mass (fit.FindModes); fit the Laplace approximation at
// the highest mode, the reverse-KL Gaussian (started from the Laplace fit, or
// the grid's moments where there is none) and its mean-field variant, and the
// forward-KL Gaussian (the grid's moments); compare each with the grid
// (compare.Compare); collect the diagnostics; and draw the plots when
// opts.Plots is set.
//
// Scales: the fits, Result.Modes and Result.Grid are on the fitting scale;
// Result.Exact and Fit.Interval95 and the plots on the original scale (the
// grid's nodes weighted by x(z), and the pushforward of each fit).
func Analyse(ctx context.Context, m *model.Model, opts Options, progress ProgressFunc) (*Result, error) {
	a := &analysis{ctx: ctx, m: m, opts: opts, tr: newTracker(progress)}
	res, err := a.run()
	if err != nil {
		return nil, err
	}
	return res, nil
}

// analysis is the state of one run of Analyse.
type analysis struct {
	ctx  context.Context
	m    *model.Model
	opts Options
	tr   *tracker
	diag diagnostics

	d      int
	names  []string
	maps   []transform.Map
	scales []string
	ev     *eval.Evaluator
	p      target.Density // on the fitting scale
	pw     *watched       // p, reporting progress from inside the fits
	// bounds and pinned are the box's limits on the fitting scale: the
	// support where finite and the sides the user set (pinned).
	bounds grid.Box
	pinned [][2]bool
	// modeLo and modeHi are the support on the fitting scale.
	modeLo, modeHi []float64
	// bounded reports a finite support bound on the fitting scale.
	bounded      []bool
	boxRes       grid.BoxResult
	g            *grid.Grid
	modes        []Mode
	fitModes     []fit.Mode
	varUnsettled []bool // fitting scale
	noVariance   bool
	// unresolved reports a grid that cannot integrate the density: it is
	// +Inf at some node, or one node holds most of the mass.
	unresolved bool
	// singularImproper reports a density that grows too fast towards a
	// bound of its support to be integrable (like 1/x).
	singularImproper bool
	// noise is the spacing of doubles at the grid's highest log p where it
	// exceeds precisionWarn: the rounding noise of log p (0 otherwise).
	noise float64
}

func (a *analysis) run() (*Result, error) {
	a.tr.enter(stageCompile)
	if err := a.compile(); err != nil {
		return nil, err
	}
	if err := a.findBox(); err != nil {
		return nil, err
	}
	if err := a.evaluateGrid(); err != nil {
		return nil, err
	}
	res := &Result{Params: a.names, Form: a.m.Form.String(), Scales: a.scales}
	a.checkResolved()
	a.checkSingularBounds()
	a.checkPrecision()
	a.checkTails()
	if err := a.findModes(); err != nil {
		return nil, err
	}
	res.Modes = a.modes
	if err := a.fitAll(res); err != nil {
		return nil, err
	}
	a.fillExact(res)
	a.fillGridInfo(res)
	a.gridDiagnostics()
	if a.opts.Plots {
		a.tr.enter(stagePlots)
		if err := a.ctx.Err(); err != nil {
			return nil, err
		}
		pl, err := a.plots(res)
		if err != nil {
			return nil, err
		}
		res.Plots = pl
	}
	res.Diagnostics = a.diag.sorted()
	res.Timing = a.tr.done()
	return res, nil
}

// compile checks the options, compiles the model and wraps it on the
// fitting scale.
func (a *analysis) compile() error {
	if a.m == nil || len(a.m.Params) == 0 {
		return ErrNoModel
	}
	d := len(a.m.Params)
	a.d = d
	if len(a.opts.Params) > d {
		return fmt.Errorf("%w: options for %d parameters, but the model has %d", ErrOptions, len(a.opts.Params), d)
	}
	ev, err := eval.Compile(a.m)
	if err != nil {
		return err
	}
	a.ev = ev
	a.maps = make([]transform.Map, d)
	a.scales = make([]string, d)
	a.bounds = grid.Box{Lo: make([]float64, d), Hi: make([]float64, d)}
	a.pinned = make([][2]bool, d)
	a.modeLo, a.modeHi = make([]float64, d), make([]float64, d)
	a.bounded = make([]bool, d)
	allIdentity := true
	for i, prm := range a.m.Params {
		a.names = append(a.names, prm.Name)
		po := ParamOptions{}
		if i < len(a.opts.Params) {
			po = a.opts.Params[i]
		}
		if po.Points < 0 {
			return fmt.Errorf("%w: parameter %s: %d grid points", ErrOptions, prm.Name, po.Points)
		}
		if most := MaxAxisPoints(d); po.Points > most {
			return fmt.Errorf("%w: parameter %s: %d grid points, more than the %d a model of %d parameters may have (the grid must fit in memory)", ErrOptions, prm.Name, po.Points, most, d)
		}
		mp := transform.Map{Kind: transform.Identity, Lo: prm.Lo, Hi: prm.Hi}
		switch po.Scale {
		case "", Identity:
		case Log:
			mp.Kind = transform.Log
		case Logit:
			mp.Kind = transform.Logit
		default:
			return fmt.Errorf("%w: parameter %s: unknown scale %q (want identity, log or logit)", ErrOptions, prm.Name, po.Scale)
		}
		if err := mp.Check(); err != nil {
			return fmt.Errorf("%w: parameter %s in [%g, %g]: %v", ErrOptions, prm.Name, prm.Lo, prm.Hi, err)
		}
		if mp.Kind != transform.Identity {
			allIdentity = false
		}
		a.maps[i] = mp
		a.scales[i] = mp.Kind.String()
		// The user's box, on the original scale.
		lo, hi := prm.Lo, prm.Hi
		var userLo, userHi bool
		if po.Lo != nil && !math.IsInf(*po.Lo, 0) {
			if math.IsNaN(*po.Lo) || *po.Lo < prm.Lo || *po.Lo >= prm.Hi {
				return fmt.Errorf("%w: parameter %s: box lower side %g outside the support [%g, %g]", ErrOptions, prm.Name, *po.Lo, prm.Lo, prm.Hi)
			}
			lo, userLo = *po.Lo, true
		}
		if po.Hi != nil && !math.IsInf(*po.Hi, 0) {
			if math.IsNaN(*po.Hi) || *po.Hi > prm.Hi || *po.Hi <= prm.Lo {
				return fmt.Errorf("%w: parameter %s: box upper side %g outside the support [%g, %g]", ErrOptions, prm.Name, *po.Hi, prm.Lo, prm.Hi)
			}
			hi, userHi = *po.Hi, true
		}
		if !(lo < hi) {
			return fmt.Errorf("%w: parameter %s: box [%g, %g] is empty", ErrOptions, prm.Name, lo, hi)
		}
		// On the fitting scale.
		zl, zh := mp.FromOriginal(lo), mp.FromOriginal(hi)
		a.bounds.Lo[i], a.bounds.Hi[i] = zl, zh
		a.pinned[i] = [2]bool{userLo && !math.IsInf(zl, 0), userHi && !math.IsInf(zh, 0)}
		a.modeLo[i], a.modeHi[i] = mp.FromOriginal(prm.Lo), mp.FromOriginal(prm.Hi)
		if mp.Kind == transform.Identity {
			a.bounded[i] = !math.IsInf(prm.Lo, 0) || !math.IsInf(prm.Hi, 0)
		}
	}
	a.p = ev
	if !allIdentity {
		w, err := transform.Wrap(ev, a.maps)
		if err != nil {
			return fmt.Errorf("%w: %v", ErrOptions, err)
		}
		a.p = w
	}
	a.pw = &watched{Density: a.p, tick: func(int) {}}
	return nil
}

func (a *analysis) points() []int {
	pts := make([]int, a.d)
	for i := range pts {
		if i < len(a.opts.Params) {
			pts[i] = a.opts.Params[i].Points
		}
	}
	return pts
}

// findBox finds the grid's box on the fitting scale.
func (a *analysis) findBox() error {
	a.tr.enter(stageBox)
	res, err := grid.FindBox(a.ctx, a.p, grid.BoxSettings{
		Bounds:   a.bounds,
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
	a.boxRes = res
	if !res.Converged {
		a.diag.add(CodeBoxNotSettled, SeverityWarning,
			"The search for the box stopped after %d grids before the box settled; the exact results may miss mass.", res.Iterations)
	}
	return nil
}

func (a *analysis) free() [][2]bool {
	f := make([][2]bool, a.d)
	for k := range f {
		f[k] = [2]bool{!a.boxRes.Fixed[k][0], !a.boxRes.Fixed[k][1]}
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

func (a *analysis) evaluateGrid() error {
	a.tr.enter(stageGrid)
	g, err := a.gridOn(a.boxRes.Box)
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
			if a.boxRes.Fixed[k][side] || a.boxRes.Capped[k][side] || g.Stats.EdgeMass[k][side] <= refineEdgeMass {
				continue
			}
			retry = true
			if side == 0 {
				box.Lo[k] = math.Max(box.Lo[k]-w/2, a.bounds.Lo[k])
			} else {
				box.Hi[k] = math.Min(box.Hi[k]+w/2, a.bounds.Hi[k])
			}
		}
	}
	if retry {
		g2, err := a.gridOn(box)
		if err != nil {
			return err
		}
		g = g2
		a.boxRes.Box = box
	}
	// A box stretched over faint tails (a funnel, a heavy tail) can leave
	// the centre under-resolved. Then trim each free side to where
	// trimTail of the mass lies beyond it, where that narrows an axis by
	// 30 % or more, and keep the grid whose error estimate (half resolution
	// plus the mass beyond the box) is smaller.
	if coarse(g) {
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
			if !a.boxRes.Fixed[k][0] {
				nl = g.Nodes[k][lo]
			}
			if !a.boxRes.Fixed[k][1] {
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
				a.boxRes.Box = box
				a.diag.add(CodeEdgeMass, SeverityWarning,
					"The box reached so far into faint tails that the grid could not resolve the centre; it was narrowed along %s to where about %.0g of the mass lies beyond each side, and the exact results are those of that box.",
					list(names), trimTail)
			}
		}
	}
	a.g = g
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
	g := a.g
	posInf := 0
	for _, v := range g.LogP {
		if math.IsInf(v, 1) {
			posInf++
		}
	}
	if posInf > 0 {
		a.unresolved = true
		a.diag.add(CodeUnresolved, SeverityError,
			"The log-density is +inf at %d of the grid points: the density is infinite there (an overflow, or a singularity), which a grid cannot integrate, so log Z, the exact moments and the fits' comparisons with them are not reported.", posInf)
		return
	}
	for k := 0; k < a.d; k++ {
		mass := g.Stats.Marginals[k].Mass
		top := 0
		for i, m := range mass {
			if m > mass[top] {
				top = i
			}
		}
		if edge := top == 0 || top == len(mass)-1; edge && a.boxRes.Capped[k][min(top, 1)] {
			// Mass piled at a face the box search could not widen further:
			// an improper density, which gridDiagnostics reports.
			continue
		}
		if mass[top] > unresolvedShare {
			a.unresolved = true
			at := a.names[k]
			if x := a.maps[k].ToOriginal(g.Nodes[k][top]); !math.IsInf(x, 0) {
				at = fmt.Sprintf("%s = %.4g", a.names[k], x)
			}
			a.diag.add(CodeUnresolved, SeverityError,
				"The grid's layer at %s holds %s of the mass: the density has a peak (or an infinite spike, or the neck of a funnel) narrower than the grid's spacing along %s, so log Z, the exact moments and the fits' comparisons with them are not reported.",
				at, percent(mass[top]), a.names[k])
		}
	}
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
	m := math.Abs(a.g.Max)
	ulp := math.Nextafter(m, math.Inf(1)) - m
	if !(ulp > precisionWarn) {
		return
	}
	a.noise = ulp
	what := "divergences near zero are noise and negative ones are not reported"
	if ulp > precisionAbsent {
		what = "the divergences and Hellinger distances are noise and are not reported"
	}
	a.diag.add(CodeLostPrecision, SeverityWarning,
		"log p is about %.3g at its highest, where doubles lie %.2g apart: the density carries rounding noise of that size in log p, so %s; move the large constant out of the model (log p needs only be right up to a constant).",
		a.g.Max, ulp, what)
}

// nonIntegrableSlope is the slope of log density against log distance to a
// bound below which the density counts as not integrable there (-1 is the
// limit; the slope comes from four nodes).
const nonIntegrableSlope = -0.97

// checkSingularBounds looks at each face that lies on a bound of the
// support for a density that grows without bound towards it, as x^(a-1)
// with a < 1 (Beta and Gamma densities with shape below 1). The grid's
// rule misses the mass next to such a bound at the order h^a, so the change
// from half resolution, E(2h) - E(h) = (2^a - 1) E(h), understates the error
// E(h): the error estimates of log Z and the moments are scaled by
// 1 / (2^a - 1), with a from the slope of the log marginal density against
// the log distance over the four nodes nearest the bound (where the slope
// from nodes 1-2 matches that from nodes 4-8, as a power law's does). A
// slope of -1 or below is not integrable: the density is improper.
func (a *analysis) checkSingularBounds() {
	st := &a.g.Stats
	sides := [2]string{"lower", "upper"}
	worst := 1.0
	for k := 0; k < a.d; k++ {
		dens := st.Marginals[k].Density
		n := len(dens)
		for side := 0; side < 2; side++ {
			if !a.boxRes.Fixed[k][side] || a.pinned[k][side] || n < 16 {
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
			if slope < nonIntegrableSlope {
				// Like 1/x or steeper: not integrable at the bound.
				a.singularImproper = true
				a.diag.add(CodeImproper, SeverityError,
					"The density grows towards the %s bound of %s (%g) like a power %.2g of the distance, too fast to be integrable there: the density looks improper, so log Z and the exact moments are not reported.",
					sides[side], a.names[k], bound, slope)
				continue
			}
			order := math.Max(1+slope, 0.05)
			f := 1 / (math.Pow(2, order) - 1)
			worst = math.Max(worst, f)
			a.diag.add(CodeInfiniteAtBound, SeverityWarning,
				"The density grows without bound towards the %s bound of %s (%g), like a power %.2g of the distance: the grid resolves this poorly, so its error estimates were scaled up %.2g times; fit %s on the log or logit scale, where it is smooth.",
				sides[side], a.names[k], bound, slope, f, a.names[k])
		}
	}
	if worst > 1 {
		st.LogZErr *= worst
		for _, m := range []*grid.Moments{&st.Fitting, &st.Original} {
			for k := range m.MeanErr {
				m.MeanErr[k] *= worst
				for l := range m.CovErr[k] {
					m.CovErr[k][l] *= worst
				}
			}
		}
	}
}

// checkTails decides, per parameter on the fitting scale, whether the
// variance has settled.
func (a *analysis) checkTails() {
	st := &a.g.Stats
	a.varUnsettled = make([]bool, a.d)
	for k := 0; k < a.d; k++ {
		if a.unresolved || a.improper(k) || st.Fitting.TailShare[k] > tailShareAbsent || !(st.Fitting.SD[k] > 0) {
			a.varUnsettled[k] = true
			a.noVariance = true
		}
	}
}

// findModes polishes the grid's peaks into modes with their masses.
func (a *analysis) findModes() error {
	a.tr.enter(stageModes)
	peaks, err := a.g.Peaks(a.ctx, func(f float64) { a.tr.at(0.5 * f) })
	if err != nil {
		return err
	}
	var starts, rest []grid.Peak
	for i, pk := range peaks {
		if i == 0 || (pk.Mass >= 1e-3 && len(starts) < 8) {
			starts = append(starts, pk)
		} else {
			rest = append(rest, pk)
		}
	}
	a.pw.tick = func(n int) { a.tr.at(0.5 + 0.5*(1-math.Exp(-float64(n)/2000))) }
	sd := a.g.Stats.Fitting.SD
	var modes []fit.Mode
	var masses []float64
	startMode := make([]int, len(starts)) // the mode each start reached, or -1
	for si, pk := range starts {
		startMode[si] = -1
		ms, err := fit.FindModes(a.ctx, a.pw, [][]float64{pk.Point}, a.modeLo, a.modeHi)
		if err != nil {
			if ctxErr := a.ctx.Err(); ctxErr != nil {
				return ctxErr
			}
			continue
		}
		m := ms[0]
		if !m.Converged && a.farOutside(m.X) {
			// Newton's method ran off (a log-density that rises without
			// bound, as a linear one): that is no mode.
			continue
		}
		j := -1
		for i, o := range modes {
			if sameMode(o.X, m.X, sd, a.g) {
				j = i
				break
			}
		}
		if j < 0 {
			modes = append(modes, m)
			masses = append(masses, 0)
			j = len(modes) - 1
		}
		masses[j] += pk.Mass
		startMode[si] = j
	}
	// The small basins (grid ripples, the lattice's view of a thin ridge)
	// go to the mode of the nearest start, in exact standard deviations.
	for _, pk := range rest {
		best, bestD := -1, math.Inf(1)
		for si, st := range starts {
			if startMode[si] < 0 {
				continue
			}
			dist := 0.0
			for k := range pk.Point {
				s := sd[k]
				if !(s > 0) || math.IsInf(s, 0) {
					s = a.g.Box.Hi[k] - a.g.Box.Lo[k]
				}
				dist += sq((pk.Point[k] - st.Point[k]) / s)
			}
			if dist < bestD {
				best, bestD = startMode[si], dist
			}
		}
		if best >= 0 {
			masses[best] += pk.Mass
		}
	}
	// Highest first.
	order := make([]int, len(modes))
	for i := range order {
		order[i] = i
	}
	for i := 1; i < len(order); i++ {
		for j := i; j > 0 && modes[order[j]].LogDensity > modes[order[j-1]].LogDensity; j-- {
			order[j], order[j-1] = order[j-1], order[j]
		}
	}
	a.modes = nil
	a.fitModes = nil
	for _, i := range order {
		m := modes[i]
		a.fitModes = append(a.fitModes, m)
		a.modes = append(a.modes, Mode{
			X: append([]float64(nil), m.X...), LogDensity: m.LogDensity, Mass: masses[i],
			PositiveDefinite: m.PositiveDefinite, OnBound: m.OnBound,
		})
	}
	if len(a.modes) == 0 {
		a.diag.add(CodeNoMode, SeverityError, "The mode search found no mode from the grid's highest points, so there is no Laplace fit.")
		return nil
	}
	var big []string
	second := 0.0
	for i, m := range a.modes {
		if i > 0 {
			second = math.Max(second, m.Mass)
		}
		big = append(big, percent(m.Mass))
	}
	if len(a.modes) > 1 {
		sev := SeverityInfo
		if second >= modeMassWarn {
			sev = SeverityWarning
		}
		a.diag.add(CodeSeveralModes, sev,
			"The density has %d modes, holding about %s of the mass (highest first); the Laplace fit describes only the highest one, and no single Gaussian describes them all.",
			len(a.modes), list(big))
	}
	return nil
}

// farOutside reports a point more than one box width outside the grid's
// box along some axis (fitting scale).
func (a *analysis) farOutside(x []float64) bool {
	for k, v := range x {
		lo, hi := a.g.Box.Lo[k], a.g.Box.Hi[k]
		if w := hi - lo; v < lo-w || v > hi+w {
			return true
		}
	}
	return false
}

// logZAbsent reports that log Z is not reported: the grid does not resolve
// the density, or the density looks improper (more mass beyond the box
// than in it, or mass that stays at a face however far it is widened).
func (a *analysis) logZAbsent() bool {
	if a.unresolved || a.g.Stats.TailMass > 1 {
		return true
	}
	for k := 0; k < a.d; k++ {
		if a.improper(k) {
			return true
		}
	}
	return false
}

// improper reports an axis whose box search stopped at its cap with more
// than improperEdgeMass in the outer layer of a face, and every axis of a
// density that is not integrable at a bound of its support.
func (a *analysis) improper(k int) bool {
	if a.singularImproper {
		return true
	}
	for side := 0; side < 2; side++ {
		if a.boxRes.Capped[k][side] && a.g.Stats.EdgeMass[k][side] > improperEdgeMass {
			return true
		}
	}
	return false
}

// sameMode reports points within 1e-3 exact sd of each other on every axis
// (or 1e-6 of the box where the sd is unknown).
func sameMode(x, y, sd []float64, g *grid.Grid) bool {
	for k := range x {
		s := sd[k]
		if !(s > 0) || math.IsInf(s, 0) {
			s = 1e-3 * (g.Box.Hi[k] - g.Box.Lo[k])
		}
		if math.Abs(x[k]-y[k]) > 1e-3*s {
			return false
		}
	}
	return true
}

// fitAll computes the four fits and compares them with the grid.
func (a *analysis) fitAll(res *Result) error {
	type named struct {
		name string
		g    fit.Gaussian
		out  **Fit
		prec *mat.SymDense
	}
	var fits []named

	// Laplace.
	a.tr.enter(stageLaplace)
	var lap *fit.LaplaceFit
	if len(a.fitModes) > 0 {
		m := a.fitModes[0]
		lf, err := fit.Laplace(m)
		switch {
		case err == nil:
			lap = &lf
			f := &Fit{Iterations: m.Iterations, Converged: m.Converged, Residual: m.GradNorm}
			lz := lf.LogZ
			f.LogZ = &lz
			res.Fits.Laplace = f
			fits = append(fits, named{"laplace", lf.Gaussian, &res.Fits.Laplace, lf.Precision})
		case errors.Is(err, fit.ErrOnBound):
			a.diag.add(CodeModeOnBound, SeverityWarning,
				"No Laplace fit: the highest mode, at %s, lies on a bound of the support, where the curvature does not describe the density.", a.pointString(m.X))
		case errors.Is(err, fit.ErrNotPositiveDefinite):
			why := "-Hessian there is not positive definite, so the point is not a strict maximum"
			if m.Flat {
				why = "the curvature there is numerically zero (the density is flatter than a Gaussian at its peak)"
			}
			a.diag.add(CodeNotPositiveDefinite, SeverityWarning,
				"No Laplace fit: at the highest mode, %s, %s.", a.pointString(m.X), why)
		default:
			a.diag.add(CodeFitFailed, SeverityError, "No Laplace fit: %v.", err)
		}
	}

	// The start of the reverse-KL fits: the Laplace fit, else the grid's
	// moments.
	var init *fit.Gaussian
	if lap != nil {
		init = &lap.Gaussian
	} else if !a.noVariance {
		if g, err := fit.MomentMatch(a.g.Stats.Fitting.Mean, symFromRows(a.g.Stats.Fitting.Cov)); err == nil {
			init = &g
		}
	}
	infiniteKL := false
	variational := func(stage string, mf bool, init fit.Gaussian) (*fit.VariationalFit, error) {
		a.tr.enter(stage)
		a.pw.tick = func(n int) { a.tr.tick(n, 20000) }
		run := fit.ReverseKL
		label := "reverse-KL"
		if mf {
			run = fit.MeanField
			label = "mean-field"
		}
		vf, err := run(a.ctx, a.pw, init, fit.Settings{})
		if ctxErr := a.ctx.Err(); ctxErr != nil {
			return nil, ctxErr
		}
		switch {
		case err == nil:
			return &vf, nil
		case errors.Is(err, fit.ErrNoConvergence):
			a.diag.add(CodeNoConvergence, SeverityWarning,
				"The %s fit did not converge in %d steps (residual %.2g); its last iterate is shown, marked as not converged.",
				label, vf.Iterations, math.Max(vf.GradResidual, vf.PrecisionResidual))
			if vf.Mean == nil || vf.Cov == nil {
				return nil, nil
			}
			return &vf, nil
		case errors.Is(err, fit.ErrInfiniteKL):
			infiniteKL = true
			return nil, nil
		default:
			a.diag.add(CodeFitFailed, SeverityError, "No %s fit: %v.", label, err)
			return nil, nil
		}
	}
	var rev, mfit *fit.VariationalFit
	if init != nil {
		var err error
		if rev, err = variational(stageReverseKL, false, *init); err != nil {
			return err
		}
		mfInit := *init
		if rev != nil && rev.Converged {
			mfInit = rev.Gaussian
		}
		if mfit, err = variational(stageMeanField, true, mfInit); err != nil {
			return err
		}
	} else {
		a.diag.add(CodeFitFailed, SeverityError,
			"No reverse-KL fits: there is neither a Laplace fit nor an exact covariance to start them from.")
	}
	for _, v := range []struct {
		vf   *fit.VariationalFit
		name string
		out  **Fit
	}{{rev, "reverse_kl", &res.Fits.ReverseKL}, {mfit, "mean_field", &res.Fits.MeanField}} {
		if v.vf == nil {
			continue
		}
		elbo := v.vf.ELBO
		*v.out = &Fit{ELBO: &elbo, Iterations: v.vf.Iterations, Converged: v.vf.Converged,
			Residual: math.Max(v.vf.GradResidual, v.vf.PrecisionResidual)}
		fits = append(fits, named{v.name, v.vf.Gaussian, v.out, v.vf.Precision})
	}

	a.checkELBO(rev, mfit)

	// Forward KL.
	if !a.noVariance {
		if g, err := fit.MomentMatch(a.g.Stats.Fitting.Mean, symFromRows(a.g.Stats.Fitting.Cov)); err == nil {
			res.Fits.ForwardKL = &Fit{Converged: true}
			fits = append(fits, named{"forward_kl", g, &res.Fits.ForwardKL, nil})
		} else {
			a.diag.add(CodeFitFailed, SeverityError, "No forward-KL fit: %v.", err)
		}
	}

	var boundedNames []string
	for k, b := range a.bounded {
		if b {
			boundedNames = append(boundedNames, a.names[k])
		}
	}
	if len(boundedNames) > 0 {
		sev := SeverityInfo
		what := "KL(q||p) is infinite for every fit"
		if infiniteKL {
			sev = SeverityWarning
			what = "KL(q||p) is infinite for every fit and the reverse-KL fits do not exist"
		}
		a.diag.add(CodeInfiniteKL, sev,
			"The support of %s is bounded, so every Gaussian puts mass where the density is zero: %s; fit %s on the log or logit scale, where they exist.",
			list(boundedNames), what, list(boundedNames))
	} else if infiniteKL {
		a.diag.add(CodeInfiniteKL, SeverityWarning,
			"The density is zero where the reverse-KL cubature reaches, so KL(q||p) is infinite for every Gaussian and the reverse-KL fits do not exist; if a parameter is bounded, declare its support and fit it on the log or logit scale.")
	}

	// Compare, leaving out a fit whose covariance is degenerate beyond its
	// scales (a correlation matrix that cannot be inverted): the
	// comparison cannot use it, and the other fits still stand.
	a.tr.enter(stageCompare)
	kept := fits[:0]
	for _, f := range fits {
		if err := degenerate(f.g.Cov); err != nil {
			*f.out = nil
			a.diag.add(CodeFitFailed, SeverityError, "No %s fit: its covariance is degenerate (%v).", fitLabel(f.name), err)
			continue
		}
		kept = append(kept, f)
	}
	fits = kept
	if len(fits) == 0 {
		return nil
	}
	qs := make([]compare.Gaussian, len(fits))
	for i, f := range fits {
		qs[i] = compare.Gaussian{Mean: f.g.Mean, Cov: f.g.Cov}
	}
	bounded := len(boundedNames) > 0
	cmp, err := compare.Compare(a.g, qs, compare.Settings{
		Bounded: bounded, Density: a.p, Context: a.ctx, Progress: a.tr.at,
	})
	if err != nil {
		if ctxErr := a.ctx.Err(); ctxErr != nil {
			return ctxErr
		}
		return fmt.Errorf("engine: comparing the fits: %w", err)
	}
	for i, f := range fits {
		out := *f.out
		c := cmp[i]
		a.fillFit(out, f.g, f.prec, c)
		switch {
		case a.logZAbsent():
			// log Z is absent (see fillExact).
		case out.LogZ != nil:
			e := *out.LogZ - a.g.Stats.LogZ
			out.EvidenceErr = &e
		case out.ELBO != nil:
			e := *out.ELBO - a.g.Stats.LogZ
			out.EvidenceErr = &e
		}
		if c.Method == compare.Cubature {
			if !c.Resolved {
				// The grid cannot trace the boundary of the fit's 95 %
				// region either: the coverage it gives would mislead.
				out.Coverage95 = math.NaN()
				a.diag.add(CodeFitOffGrid, SeverityInfo,
					"The %s fit is narrower than the grid resolves; its KL(q||p) and Hellinger distance come from a cubature in its own coordinates, and its coverage is not reported.",
					fitLabel(f.name))
			} else {
				a.diag.add(CodeFitOffGrid, SeverityInfo,
					"The %s fit has about %s of its mass outside the grid's box; its KL(q||p) comes from a cubature in its own coordinates.",
					fitLabel(f.name), share(math.Abs(1-c.QMass)))
			}
		}
	}
	return nil
}

// checkELBO compares the ELBO of each converged reverse-KL fit with the
// grid's log Z: the ELBO is a lower bound on log Z for every Gaussian
// (Jensen's inequality), so an ELBO above log Z by more than the grid's
// error estimate means that the grid missed mass the fit found (a peak
// narrower than the grid's spacing, between its nodes), or that the fit's
// cubature erred. Either way the grid's results cannot stand: they are
// marked unresolved, and the forward-KL fit, made from them, is not made.
func (a *analysis) checkELBO(fits ...*fit.VariationalFit) {
	if a.unresolved {
		return
	}
	lz := a.g.Stats.LogZ
	tol := 1e-6*(1+math.Abs(lz)) + 3*a.g.Stats.LogZErr
	for _, vf := range fits {
		if vf == nil || !vf.Converged || !(vf.ELBO > lz+tol) {
			continue
		}
		a.unresolved = true
		a.noVariance = true
		for k := range a.varUnsettled {
			a.varUnsettled[k] = true
		}
		a.diag.add(CodeUnresolved, SeverityError,
			"A reverse-KL fit's ELBO, a lower bound on log Z, exceeds the grid's log Z by %.3g: the grid has missed part of the mass (a peak narrower than its spacing, near %s) or the fit's cubature erred, so log Z, the exact moments and the fits' comparisons with them are not reported.",
			vf.ELBO-lz, a.pointString(vf.Mean))
		return
	}
}

// degenerate reports a covariance whose correlation matrix is not
// positive definite or too ill-conditioned to invert (the test of the
// comparison's precision).
func degenerate(cov *mat.SymDense) error {
	d := cov.SymmetricDim()
	corr := mat.NewSymDense(d, nil)
	for i := 0; i < d; i++ {
		for j := i; j < d; j++ {
			corr.SetSym(i, j, cov.At(i, j)/math.Sqrt(cov.At(i, i)*cov.At(j, j)))
		}
	}
	var ch mat.Cholesky
	if !ch.Factorize(corr) {
		return errors.New("correlation matrix not positive definite")
	}
	var inv mat.SymDense
	return ch.InverseTo(&inv)
}

func fitLabel(name string) string {
	switch name {
	case "laplace":
		return "Laplace"
	case "reverse_kl":
		return "reverse-KL"
	case "mean_field":
		return "mean-field"
	}
	return "forward-KL"
}

// fillFit fills a fit's moments (fitting scale), interval (original scale)
// and comparison.
func (a *analysis) fillFit(f *Fit, g fit.Gaussian, prec *mat.SymDense, c compare.Result) {
	d := a.d
	f.Mean = append([]float64(nil), g.Mean...)
	f.Cov = fit.Rows(g.Cov)
	f.SD = g.SD()
	f.Corr = fit.Rows(g.Corr())
	f.Interval95 = make([][2]float64, d)
	for k := 0; k < d; k++ {
		iv := g.Interval(k, 0.95)
		f.Interval95[k] = [2]float64{a.maps[k].ToOriginal(iv[0]), a.maps[k].ToOriginal(iv[1])}
	}
	if prec != nil {
		f.Precision = fit.Rows(prec)
	}
	f.KLqp, f.KLpq, f.Hellinger = c.KLqp, c.KLpq, c.Hellinger
	f.MeanErrSD, f.SDRatio = c.MeanErrSD, c.SDRatio
	f.Coverage95 = c.Coverage95
	if a.noise > precisionAbsent {
		f.KLqp, f.KLpq, f.Hellinger = math.NaN(), math.NaN(), math.NaN()
	} else if a.noise > 0 {
		// Below zero only by the rounding noise of log p.
		if f.KLqp < 0 {
			f.KLqp = math.NaN()
		}
		if f.KLpq < 0 {
			f.KLpq = math.NaN()
		}
	}
	if a.unresolved {
		nan := math.NaN()
		f.KLqp, f.KLpq, f.Hellinger, f.Coverage95 = nan, nan, nan, nan
		for k := 0; k < d; k++ {
			f.MeanErrSD[k], f.SDRatio[k] = nan, nan
		}
		return
	}
	for k := 0; k < d; k++ {
		if a.varUnsettled[k] {
			f.MeanErrSD[k], f.SDRatio[k] = math.NaN(), math.NaN()
			// E_p[(z - m)^2] is infinite: so is KL(p||q).
			f.KLpq = math.Inf(1)
		}
	}
}

// fillExact fills the exact posterior on the original scale.
func (a *analysis) fillExact(res *Result) {
	st := &a.g.Stats
	o := &st.Original
	d := a.d
	ex := &res.Exact
	ex.LogZ = st.LogZ
	ex.LogZErr = st.LogZErr + st.TailMass
	if st.TailMass > 1 {
		// More mass seems to lie beyond the box than in it: the density is
		// taken to be improper, and log Z does not exist.
		ex.LogZ, ex.LogZErr = math.NaN(), math.NaN()
		a.diag.add(CodeImproper, SeverityError,
			"The mass beyond the box, extrapolated from its faces, exceeds the mass inside: the density looks improper, so log Z, the evidence errors and the moments that do not settle are not reported.")
	} else if a.logZAbsent() {
		// Mass stays at a face however far it is widened (the improper
		// diagnostic of gridDiagnostics says where): no log Z either.
		ex.LogZ, ex.LogZErr = math.NaN(), math.NaN()
	}
	ex.Mean = append([]float64(nil), o.Mean...)
	ex.MeanErr = append([]float64(nil), o.MeanErr...)
	ex.Cov = copyRows(o.Cov)
	ex.CovErr = copyRows(o.CovErr)
	ex.SD = append([]float64(nil), o.SD...)
	ex.Corr = copyRows(o.Corr)
	ex.Quantiles = append([][3]float64(nil), o.Quantiles...)
	ex.Skewness = append([]float64(nil), o.Skewness...)
	ex.ExcessKurtosis = append([]float64(nil), o.ExcessKurtosis...)
	x := make([]float64, d)
	a.g.Point(st.OrigArgMax, x)
	ex.GridMode = make([]float64, d)
	for k := range x {
		ex.GridMode[k] = a.maps[k].ToOriginal(x[k])
	}
	ex.Mode = a.originalMode(ex.GridMode)
	a.dropOverflow(ex)
	if a.unresolved {
		nan := math.NaN()
		ex.LogZ, ex.LogZErr = nan, nan
		for k := 0; k < d; k++ {
			ex.Mean[k], ex.MeanErr[k], ex.SD[k] = nan, nan, nan
			ex.Skewness[k], ex.ExcessKurtosis[k] = nan, nan
			ex.Quantiles[k] = [3]float64{nan, nan, nan}
			for l := 0; l < d; l++ {
				ex.Cov[k][l], ex.CovErr[k][l], ex.Corr[k][l] = nan, nan, nan
			}
		}
		return
	}

	// Quantities that do not exist are absent.
	var noVar, noMean, noKurt []string
	for k := 0; k < d; k++ {
		varGone := a.improper(k) || o.TailShare[k] > tailShareAbsent || a.varUnsettled[k]
		meanGone := o.AbsTailShare[k] > absShareAbsent || a.improper(k)
		if a.improper(k) {
			// Nor do the quantiles of a marginal that is not integrable.
			nan := math.NaN()
			ex.Quantiles[k] = [3]float64{nan, nan, nan}
		}
		if varGone {
			noVar = append(noVar, a.names[k])
			nan := math.NaN()
			ex.SD[k], ex.Skewness[k], ex.ExcessKurtosis[k] = nan, nan, nan
			for l := 0; l < d; l++ {
				ex.Cov[k][l], ex.Cov[l][k] = nan, nan
				ex.CovErr[k][l], ex.CovErr[l][k] = nan, nan
				ex.Corr[k][l], ex.Corr[l][k] = nan, nan
			}
		}
		if meanGone {
			noMean = append(noMean, a.names[k])
			ex.Mean[k], ex.MeanErr[k] = math.NaN(), math.NaN()
		}
		if !varGone && o.KurtosisTailShare[k] > tailShareAbsent {
			noKurt = append(noKurt, a.names[k])
			ex.ExcessKurtosis[k] = math.NaN()
		}
	}
	if len(noVar) > 0 {
		a.diag.add(CodeNoVariance, SeverityWarning,
			"The variance of %s does not settle as the box widens (it may not exist, as for a Cauchy density): the exact covariance and the forward-KL fit are not reported.", list(noVar))
	}
	if len(noKurt) > 0 {
		a.diag.add(CodeHeavyTails, SeverityWarning,
			"The fourth moment of %s does not settle as the box widens (the tails may be too heavy for it to exist): the excess kurtosis is not reported.", list(noKurt))
	}
	if len(noMean) > 0 {
		a.diag.add(CodeNoMean, SeverityWarning,
			"The mean of %s does not settle as the box widens either (it may not exist): the exact mean is not reported.", list(noMean))
	}
}

// dropOverflow makes absent, with a diagnostic, the exact moments and
// quantiles that came out of the grid's sums as NaN or infinite: on the
// original scale of a log- or logit-scaled parameter x = e^z overflows
// where the box reaches z > 709.
func (a *analysis) dropOverflow(ex *Exact) {
	d := a.d
	nan := math.NaN()
	bad := func(v float64) bool { return math.IsNaN(v) || math.IsInf(v, 0) }
	var names []string
	for k := 0; k < d; k++ {
		over := bad(ex.Mean[k]) || bad(ex.Cov[k][k]) || bad(ex.Skewness[k]) || bad(ex.ExcessKurtosis[k])
		for _, q := range ex.Quantiles[k] {
			over = over || bad(q)
		}
		for l := 0; l < d; l++ {
			over = over || bad(ex.Cov[k][l])
		}
		if !over {
			continue
		}
		names = append(names, a.names[k])
		if bad(ex.Mean[k]) {
			ex.Mean[k], ex.MeanErr[k] = nan, nan
		}
		for q := range ex.Quantiles[k] {
			if bad(ex.Quantiles[k][q]) {
				ex.Quantiles[k] = [3]float64{nan, nan, nan}
			}
		}
		if bad(ex.Cov[k][k]) || bad(ex.Skewness[k]) || bad(ex.ExcessKurtosis[k]) {
			ex.Skewness[k], ex.ExcessKurtosis[k] = nan, nan
		}
		for l := 0; l < d; l++ {
			if bad(ex.Cov[k][l]) || bad(ex.Cov[k][k]) {
				ex.Cov[k][l], ex.Cov[l][k], ex.CovErr[k][l], ex.CovErr[l][k] = nan, nan, nan, nan
				ex.Corr[k][l], ex.Corr[l][k] = nan, nan
			}
		}
		if bad(ex.Cov[k][k]) {
			ex.SD[k] = nan
		}
	}
	if bad(ex.LogZ) && !math.IsNaN(ex.LogZ) {
		ex.LogZ, ex.LogZErr = nan, nan
		names = append(names, "log Z")
	}
	if len(names) > 0 {
		a.diag.add(CodeOverflow, SeverityWarning,
			"The exact moments of %s overflow double precision on the original scale (the box reaches values too large to square or sum), so those that did are not reported.", list(names))
	}
}

// originalMode polishes the highest mode on the original scale.
func (a *analysis) originalMode(gridMode []float64) []float64 {
	d := a.d
	transformed := false
	for _, m := range a.maps {
		if m.Kind != transform.Identity {
			transformed = true
		}
	}
	if !transformed {
		if len(a.modes) > 0 {
			return append([]float64(nil), a.modes[0].X...)
		}
		return nanSlice(d)
	}
	starts := [][]float64{gridMode}
	if len(a.modes) > 0 {
		x := make([]float64, d)
		for k := range x {
			x[k] = a.maps[k].ToOriginal(a.modes[0].X[k])
		}
		starts = append(starts, x)
	}
	lo, hi := make([]float64, d), make([]float64, d)
	for k, prm := range a.m.Params {
		lo[k], hi[k] = prm.Lo, prm.Hi
	}
	ms, err := fit.FindModes(a.ctx, &watched{Density: a.ev, tick: a.pw.tick}, starts, lo, hi)
	if err != nil || len(ms) == 0 {
		a.diag.add(CodeModeNotPolished, SeverityInfo,
			"The mode search on the original scale failed, so the exact mode is not reported (the grid's best point is).")
		return nanSlice(d)
	}
	return append([]float64(nil), ms[0].X...)
}

func (a *analysis) fillGridInfo(res *Result) {
	g := a.g
	st := &g.Stats
	gi := &res.Grid
	gi.Lo = append([]float64(nil), g.Box.Lo...)
	gi.Hi = append([]float64(nil), g.Box.Hi...)
	gi.Points = append([]int(nil), g.N...)
	gi.NonFinite = st.NonFinite
	for k := 0; k < a.d; k++ {
		for side := 0; side < 2; side++ {
			if !a.boxRes.Fixed[k][side] || a.pinned[k][side] {
				gi.EdgeMass = math.Max(gi.EdgeMass, st.EdgeMass[k][side])
			}
		}
	}
}

// gridDiagnostics reports on the box, the tails, the shape of the marginals
// and the grid's error.
func (a *analysis) gridDiagnostics() {
	st := &a.g.Stats
	sides := [2]string{"lower", "upper"}
	for k := 0; k < a.d; k++ {
		for side := 0; side < 2; side++ {
			e := st.EdgeMass[k][side]
			switch {
			case a.boxRes.Capped[k][side] && e > improperEdgeMass:
				a.diag.add(CodeImproper, SeverityError,
					"Mass stays at the %s edge of %s however far the box is widened (%s in its outermost layer): the density may be improper (not integrable) or too heavy-tailed for a grid, and the exact results are those of the truncated box.",
					sides[side], a.names[k], share(e))
			case a.boxRes.Capped[k][side] && e > 1e-10:
				a.diag.add(CodeEdgeMass, SeverityWarning,
					"The box was widened at the %s end of %s as far as the grid still resolves the density's centre, and %s of the mass remains in its outermost layer: the tails are heavy, and the exact results are those of the truncated box.",
					sides[side], a.names[k], share(e))
			case a.pinned[k][side] && e > edgeMassWarn:
				a.diag.add(CodeEdgeMass, SeverityWarning,
					"The box side you set at the %s end of %s cuts off mass: %s of it lies in the outermost layer of the grid there.",
					sides[side], a.names[k], share(e))
			case !a.boxRes.Fixed[k][side] && e > edgeMassWarn:
				a.diag.add(CodeEdgeMass, SeverityWarning,
					"A share %s of the mass lies in the outermost layer of the grid at the %s end of %s: the box may cut off part of the density.",
					share(e), sides[side], a.names[k])
			}
		}
	}
	f := &st.Fitting
	var heavy []string
	for k := 0; k < a.d; k++ {
		if !a.varUnsettled[k] && f.TailShare[k] > tailShareWarn {
			heavy = append(heavy, a.names[k])
		}
	}
	if len(heavy) > 0 {
		a.diag.add(CodeHeavyTails, SeverityWarning,
			"The tails of %s are heavy: the mean or variance still moves as the box widens, so the exact moments and the forward-KL fit are uncertain.", list(heavy))
	}
	if st.NonFinite > 0 {
		a.diag.add(CodeNonFinite, SeverityWarning,
			"The log-density is NaN or +inf at %s of the grid points; they were left out of every result.", percentPoints(st.NonFinite))
	}
	for k := 0; k < a.d; k++ {
		if a.varUnsettled[k] {
			continue
		}
		scale := ""
		if a.maps[k].Kind != transform.Identity {
			scale = " on its " + a.maps[k].Kind.String() + " scale"
		}
		if s := f.Skewness[k]; math.Abs(s) > skewWarn {
			a.diag.add(CodeSkewed, SeverityWarning,
				"The marginal of %s%s is skewed (skewness %.2f): a Gaussian misplaces its mass.", a.names[k], scale, s)
		}
		if kt := f.ExcessKurtosis[k]; math.Abs(kt) > kurtWarn && f.KurtosisTailShare[k] <= tailShareAbsent {
			what := "heavier"
			if kt < 0 {
				what = "lighter"
			}
			a.diag.add(CodeTailsKurtosis, SeverityWarning,
				"The marginal of %s%s has %s tails than a Gaussian (excess kurtosis %.2f).", a.names[k], scale, what, kt)
		}
	}
	o := &st.Original
	var bad []string
	if st.LogZErr > logZErrWarn {
		bad = append(bad, fmt.Sprintf("log Z by about %.2g", st.LogZErr))
	}
	for k := 0; k < a.d; k++ {
		if sd, e := o.SD[k], o.MeanErr[k]; a.varUnsettled[k] || !(sd > 0) || math.IsInf(sd, 0) || math.IsNaN(e) || math.IsInf(e, 0) {
			// No variance, or moments that overflowed on the original
			// scale (reported by dropOverflow).
			continue
		}
		if sd := o.SD[k]; o.MeanErr[k] > meanErrWarn*sd {
			bad = append(bad, fmt.Sprintf("the mean of %s by %.2g sd", a.names[k], o.MeanErr[k]/sd))
		}
		if v, e := o.Cov[k][k], o.CovErr[k][k]; !math.IsInf(v, 0) && !math.IsInf(e, 0) && !math.IsNaN(e) && e > varErrWarn*v {
			bad = append(bad, fmt.Sprintf("the variance of %s by %s", a.names[k], percent(o.CovErr[k][k]/v)))
		}
	}
	if len(bad) > 0 && !a.unresolved {
		a.diag.add(CodeGridError, SeverityWarning,
			"The grid may be too coarse: at half resolution it changes %s; give the parameters more points.", list(bad))
	}
}

func percentPoints(x float64) string {
	if x >= 1e-4 {
		return fmt.Sprintf("%.2g %%", 100*x)
	}
	return fmt.Sprintf("a share %.1g", x)
}

func (a *analysis) pointString(z []float64) string {
	s := ""
	for k, v := range z {
		if k > 0 {
			s += ", "
		}
		s += fmt.Sprintf("%s = %.4g", a.names[k], a.maps[k].ToOriginal(v))
	}
	return s
}

func sq(x float64) float64 { return x * x }

func symFromRows(r [][]float64) *mat.SymDense {
	d := len(r)
	s := mat.NewSymDense(d, nil)
	for i := 0; i < d; i++ {
		for j := i; j < d; j++ {
			s.SetSym(i, j, r[i][j])
		}
	}
	return s
}

func copyRows(r [][]float64) [][]float64 {
	out := make([][]float64, len(r))
	for i := range r {
		out[i] = append([]float64(nil), r[i]...)
	}
	return out
}

func nanSlice(d int) []float64 {
	s := make([]float64, d)
	for i := range s {
		s[i] = math.NaN()
	}
	return s
}
