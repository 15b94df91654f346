package engine

import (
	"math"
	"slices"

	"gonum.org/v1/gonum/mat"

	"bellcheck/engine/fit"
	"bellcheck/engine/grid"
	"bellcheck/engine/model"
	"bellcheck/engine/transform"
)

// modeSearch is what the modes stage hands on: the modes, highest first,
// as the Result reports them and as the Laplace fit takes them.
type modeSearch struct {
	modes    []Mode
	fitModes []fit.Mode
}

// findModes polishes the grid's peaks into modes with their masses.
func (a *analysis) findModes() error {
	a.tr.enter(stageModes)
	peaks, err := a.ref.grid.Peaks(a.ctx, func(f float64) { a.tr.at(0.5 * f) })
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
	sd := a.ref.fitting.SD
	var modes []fit.Mode
	var masses []float64
	startMode := make([]int, len(starts)) // the mode each start reached, or -1
	for si, pk := range starts {
		startMode[si] = -1
		m, ok, err := a.searchFrom(pk.Point)
		if err != nil {
			return err
		}
		if !ok {
			continue
		}
		if !m.Converged && a.farOutside(m.X) {
			// Newton's method ran off (a log-density that rises without
			// bound, as a linear one): that is no mode.
			continue
		}
		j := -1
		for i, o := range modes {
			if sameMode(o.X, m.X, sd, a.ref.grid) {
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
					s = a.ref.grid.Box.Hi[k] - a.ref.grid.Box.Lo[k]
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
	modes, masses, err = a.spreadStarts(modes, masses)
	if err != nil {
		return err
	}
	masses = a.unresolvedModeMasses(modes, masses)
	// Highest first.
	order := make([]int, len(modes))
	for i := range order {
		order[i] = i
	}
	slices.SortStableFunc(order, func(i, j int) int {
		switch {
		case modes[i].LogDensity > modes[j].LogDensity:
			return -1
		case modes[j].LogDensity > modes[i].LogDensity:
			return 1
		}
		return 0
	})
	a.modes.modes = nil
	a.modes.fitModes = nil
	for _, i := range order {
		m := modes[i]
		a.modes.fitModes = append(a.modes.fitModes, m)
		x := make([]float64, len(m.X))
		for k, z := range m.X {
			x[k] = a.maps[k].ToOriginal(z)
		}
		a.modes.modes = append(a.modes.modes, Mode{
			X: x, FittingScale: FittingPoint{X: slices.Clone(m.X)}, LogDensity: m.LogDensity, Mass: masses[i],
			PositiveDefinite: m.PositiveDefinite, OnBound: m.OnBound,
		})
	}
	if len(a.modes.modes) == 0 {
		a.diag.add(CodeNoMode, SeverityError, "The mode search found no mode from the grid's highest points, so there is no Laplace fit.")
		return nil
	}
	// A cost's minima that hold no posterior mass are local optima, not
	// modes of the posterior: the local_optima note tells of them.
	var massless []fit.Mode
	for i := range a.modes.modes {
		if a.massless(i) {
			massless = append(massless, a.modes.fitModes[i])
		}
	}
	return a.lesserOptima(rest, massless)
}

// noteSeveralModes says how many modes the density has and how the mass
// splits between them, where it has more than one. It runs where a result
// is reported (the early exact one and the whole), after the checks that
// may leave the masses out (QuantityModeMass): the modes are then counted
// without their shares.
func (a *analysis) noteSeveralModes() {
	// The modes the message counts: strict maxima and maxima on a bound.
	// Where the density grows without bound along a funnel's neck (a
	// hierarchical scale on the log scale), the search stops at points
	// down the neck that are neither (three such for two schools' effects,
	// with tau near 6e-10), and a mass split between them says nothing.
	var big []string
	second, counted := 0.0, 0
	for i, m := range a.modes.modes {
		if !m.PositiveDefinite && !m.OnBound {
			continue
		}
		if a.massless(i) {
			continue // in the local_optima note
		}
		if counted > 0 {
			second = max(second, m.Mass)
		}
		counted++
		big = append(big, share(m.Mass))
	}
	if counted < 2 {
		return
	}
	if !a.avail.present(QuantityModeMass) {
		a.diag.add(CodeSeveralModes, SeverityInfo,
			"The density has %d modes (their shares of the mass are not reported, as the reference missed part of it); the Laplace fit describes only the highest one, and no single Gaussian describes them all.",
			counted)
		return
	}
	sev := SeverityInfo
	if second >= modeMassWarn {
		sev = SeverityWarning
	}
	a.diag.add(CodeSeveralModes, sev,
		"The density has %d modes, holding about %s of the mass (highest first); the Laplace fit describes only the highest one, and no single Gaussian describes them all.",
		counted, list(big))
}

// massless reports whether mode i (highest first) is a cost's minimum
// that holds no posterior mass (a false minimum the grid's highest point
// led to, beside the true one the spread starts found): a local optimum,
// not a mode of the posterior, which the local_optima note tells of.
func (a *analysis) massless(i int) bool {
	m := a.modes.modes[i]
	return a.m.Form == model.Cost && i > 0 && m.Mass < lesserMass && m.PositiveDefinite
}

// laplaceLogMass returns the log of a mode's Laplace mass, log p(mode) -
// log det(-H)/2 (up to a constant common to the modes), with the Cholesky
// factor of -H; ok is false where the mode is not a strict maximum.
func laplaceLogMass(m fit.Mode, d int) (float64, *mat.Cholesky, bool) {
	if !m.PositiveDefinite {
		return 0, nil, false
	}
	n := mat.NewSymDense(d, nil)
	n.ScaleSym(-1, m.Hess)
	var c mat.Cholesky
	if !c.Factorize(n) {
		return 0, nil, false
	}
	return m.LogDensity - c.LogDet()/2, &c, true
}

// unresolvedModeMasses returns the modes' masses as Laplace estimates
// (p(mode) det(-H)^(-1/2), normalised) where every mode is a strict
// maximum and the grid's spacing along some axis exceeds a mode's sd
// there: the grid's basins then split the mass by where its nodes fall
// (a two-component mixture's mirror-image modes, label-switched, got 6 %
// and 94 % from a scouting grid whose spacing was 1.3 of their sd); else
// masses as they are.
func (a *analysis) unresolvedModeMasses(modes []fit.Mode, masses []float64) []float64 {
	if len(modes) < 2 || a.ref.grid == nil {
		return masses
	}
	d := a.d
	logMass := make([]float64, len(modes))
	coarse := false
	for i, m := range modes {
		lm, c, ok := laplaceLogMass(m, d)
		if !ok {
			return masses
		}
		logMass[i] = lm
		var cov mat.SymDense
		if c.InverseTo(&cov) != nil {
			return masses
		}
		for k := 0; k < d; k++ {
			if a.ref.grid.Spacing(k) > math.Sqrt(cov.At(k, k)) {
				coarse = true
			}
		}
	}
	if !coarse {
		return masses
	}
	top := slices.Max(logMass)
	total := 0.0
	out := make([]float64, len(modes))
	for i, lm := range logMass {
		out[i] = math.Exp(lm - top)
		total += out[i]
	}
	for i := range out {
		out[i] /= total
	}
	return out
}

// spreadStarts runs the mode search from 12 d space-filling (Halton)
// starts over ten sds (by the curvature) around the highest mode the
// grid's peaks led to, within the support (a parameter with a bound
// spreads on its unconstrained scale, a factor 20 or more either way:
// spreadMaps), so that a higher optimum the
// grid did not see (a chaotic cost, a spike between nodes) is found and
// the highest mode reported is the best optimum found. A new mode joins
// where it holds at least 1e-3 of the mass (as the peaks that start the
// search) or is higher than their best. It gets its
// mass from the Laplace estimates (p(mode) det(-H)^(-1/2)) relative to the
// modes with a positive definite curvature; the grid's masses of the
// others are scaled to leave room for it. A new mode higher than the
// peaks' best gives the starts_disagree warning.
func (a *analysis) spreadStarts(modes []fit.Mode, masses []float64) ([]fit.Mode, []float64, error) {
	if len(modes) == 0 {
		return modes, masses, nil
	}
	d := a.d
	best := 0
	for i, m := range modes {
		if m.LogDensity > modes[best].LogDensity {
			best = i
		}
	}
	half := make([]float64, d)
	var cov mat.SymDense
	var ch mat.Cholesky
	neg := mat.NewSymDense(d, nil)
	neg.ScaleSym(-1, modes[best].Hess)
	haveCov := modes[best].PositiveDefinite && ch.Factorize(neg) && ch.InverseTo(&cov) == nil
	for k := range half {
		s := a.ref.fitting.SD[k]
		if haveCov {
			s = math.Sqrt(cov.At(k, k))
		}
		if !(s > 0) || math.IsInf(s, 0) {
			s = a.ref.grid.Box.Hi[k] - a.ref.grid.Box.Lo[k]
		}
		half[k] = 10 * s
	}
	sd := a.ref.fitting.SD
	spread := a.spreadMaps(modes[best].X, half)
	primes := [4]float64{2, 3, 5, 7}
	var added []int
	for i := 1; i <= 12*d; i++ {
		z := make([]float64, d)
		for k := range z {
			z[k] = spread[k].at(2*halton(i, primes[k]) - 1)
			z[k] = min(max(z[k], a.modeLo[k]), a.modeHi[k])
		}
		m, ok, err := a.searchFrom(z)
		if err != nil {
			return nil, nil, err
		}
		if !ok || !m.Converged || !m.PositiveDefinite || math.IsInf(m.LogDensity, 0) || math.IsNaN(m.LogDensity) {
			continue
		}
		known := false
		for _, o := range modes {
			known = known || sameMode(o.X, m.X, sd, a.ref.grid)
		}
		if !known {
			modes = append(modes, m)
			masses = append(masses, 0)
			added = append(added, len(modes)-1)
		}
	}
	if len(added) == 0 {
		return modes, masses, nil
	}
	// Laplace estimates of the masses, relative to the highest.
	logMass := make([]float64, len(modes))
	top := math.Inf(-1)
	for i, m := range modes {
		logMass[i] = math.Inf(-1)
		if lm, _, ok := laplaceLogMass(m, d); ok {
			logMass[i] = lm
			top = max(top, lm)
		}
	}
	total := 0.0
	for i := range modes {
		total += math.Exp(logMass[i] - top)
	}
	// A new mode joins if it holds the share from which the peaks start
	// the search (1e-3) or is higher than their best.
	bestLogP := modes[best].LogDensity
	keep := modes[:len(modes)-len(added)]
	keptMasses := masses[:len(keep)]
	var kept []int
	newShare := 0.0
	for _, i := range added {
		share := math.Exp(logMass[i]-top) / total
		if share < 1e-3 && !(modes[i].LogDensity > bestLogP) {
			continue
		}
		keep = append(keep, modes[i])
		keptMasses = append(keptMasses, share)
		kept = append(kept, len(keep)-1)
		newShare += share
	}
	modes, masses, added = keep, keptMasses, kept
	for i := range modes {
		if !slices.Contains(added, i) {
			// The shares add up to 1 up to rounding: a new mode holding
			// all of it left 1 - newShare = -1e-16 and negative masses
			// (fuzz corpus 28c82dc02dfafb0a).
			masses[i] *= max(0, 1-newShare)
		}
	}
	higher := -1
	for _, i := range added {
		if modes[i].LogDensity > modes[best].LogDensity+1e-9*(1+math.Abs(modes[best].LogDensity)) &&
			(higher < 0 || modes[i].LogDensity > modes[higher].LogDensity) {
			higher = i
		}
	}
	if higher >= 0 && !modes[best].Converged && !modes[best].PositiveDefinite {
		// The peaks' best was no mode: Newton stalled where log p is
		// nearly flat (normal readings with three censored, whose
		// scouting box chased the tails out to s = 1.6e12: it stopped at
		// m = 4.8e9, s = 4.4e9 after 200 steps, log p 105 below the
		// optimum). Such points go; the optimum the spread starts found
		// is the search's, and no start disagrees with it.
		var real []fit.Mode
		var realMasses []float64
		for i, m := range modes {
			if m.Converged || m.PositiveDefinite || m.LogDensity >= modes[higher].LogDensity {
				real = append(real, m)
				realMasses = append(realMasses, masses[i])
			}
		}
		return real, realMasses, nil
	}
	if higher >= 0 {
		// pointString takes the fitting scale (mapping the point to the
		// original one itself: mapping it here too printed e^(e^z), +Inf
		// for a mode at x = 3934 on the log scale; fuzz corpus
		// e48cba0877d622c8).
		a.diag.add(CodeStartsDisagree, SeverityWarning,
			"Starts spread around the grid's highest point found a higher mode, at %s (log p %.6g against %.6g): the grid did not show it; the modes, the Laplace fit and the exact results are built around the highest.",
			a.pointString(modes[higher].X), modes[higher].LogDensity, modes[best].LogDensity)
	}
	return modes, masses, nil
}

// spreadAxis places one coordinate of spreadStarts's starts: at v in
// [-1, 1], centre + v half on the fitting scale, or, for a parameter with
// a bound, centre + v half on its unconstrained scale (u) mapped back.
type spreadAxis struct {
	fitting  transform.Map // the fitting scale's map
	bounded  transform.Map // the unconstrained scale's map (u)
	centre   float64       // fitting scale, or u where hasBound
	half     float64
	hasBound bool
}

func (s spreadAxis) at(v float64) float64 {
	if !s.hasBound {
		return s.centre + v*s.half
	}
	return s.fitting.FromOriginal(s.bounded.ToOriginal(s.centre + v*s.half))
}

// spreadMinHalf is the least half-width of spreadStarts's region: on a
// bounded parameter's unconstrained scale a factor e^3 = 20 on either side
// of the mode in the distance to the bound, on an unbounded one 3 in the
// parameter's units (as the nested rule's wide starts). A cost's false
// minimum can have a narrow curvature (a cooling rate of 1.19 that makes a
// stepped temperature overshoot the room's, sd 0.0025 by the curvature)
// while the true one lies at a rate of 0.13: ten sds around the false one
// never leave its basin, bounded rate or not.
const spreadMinHalf = 3

// spreadMaps returns, per parameter, where spreadStarts's starts go around
// the point x (fitting scale) with the half-widths half (fitting scale): a
// parameter whose support has a lower or upper bound spreads on its
// unconstrained scale (log or logit of the support: the scale on which
// the nested rule integrates), over 10 of its sds there but at least
// spreadMinHalf, so that the starts reach rates and scales several times
// the mode's; an unbounded one over 10 sds but at least spreadMinHalf.
func (a *analysis) spreadMaps(x, half []float64) []spreadAxis {
	out := make([]spreadAxis, a.d)
	for k, prm := range a.m.Params {
		out[k] = spreadAxis{fitting: a.maps[k], centre: x[k], half: max(half[k], spreadMinHalf)}
		um := transform.Map{Scale: transform.Unconstrained(prm.Lo, prm.Hi), Lo: prm.Lo, Hi: prm.Hi}
		if um.Scale.IsIdentity() {
			continue
		}
		xc := a.maps[k].ToOriginal(x[k])
		uc := um.FromOriginal(xc)
		// The sd on u from the fitting scale's: the change of u over a
		// tenth of the half-width (one sd), on the side that stays inside.
		sd := half[k] / 10
		du := math.Abs(um.FromOriginal(a.maps[k].ToOriginal(x[k]+sd)) - uc)
		if dl := math.Abs(um.FromOriginal(a.maps[k].ToOriginal(x[k]-sd)) - uc); math.IsNaN(du) || math.IsInf(du, 0) || (!math.IsNaN(dl) && !math.IsInf(dl, 0) && dl < du) {
			du = dl
		}
		if math.IsNaN(uc) || math.IsInf(uc, 0) || math.IsNaN(du) || math.IsInf(du, 0) {
			continue
		}
		out[k] = spreadAxis{fitting: a.maps[k], bounded: um, centre: uc, half: max(10*du, spreadMinHalf), hasBound: true}
	}
	return out
}

// farOutside reports a point more than one box width outside the grid's
// box along some axis (fitting scale).
func (a *analysis) farOutside(x []float64) bool {
	for k, v := range x {
		lo, hi := a.ref.grid.Box.Lo[k], a.ref.grid.Box.Hi[k]
		if w := hi - lo; v < lo-w || v > hi+w {
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

// searchFrom runs the mode search on the fitting scale from start; ok is
// false where it fails (the error is ctx's, when cancelled).
func (a *analysis) searchFrom(start []float64) (fit.Mode, bool, error) {
	ms, err := fit.FindModes(a.ctx, a.pw, [][]float64{start}, a.modeLo, a.modeHi)
	if err != nil {
		if ctxErr := a.ctx.Err(); ctxErr != nil {
			return fit.Mode{}, false, ctxErr
		}
		return fit.Mode{}, false, nil
	}
	return ms[0], true, nil
}

func sq(x float64) float64 { return x * x }
