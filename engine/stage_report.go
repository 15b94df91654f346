package engine

import (
	"math"
	"slices"

	"gonum.org/v1/gonum/mat"

	"bellcheck/engine/compare"
	"bellcheck/engine/fit"
	"bellcheck/engine/transform"
)

// report assembles the Result from what the stages handed on: each fit's
// moments and comparison, the exact posterior and the grid's description.
func (a *analysis) report(res *Result) {
	a.fillFits()
	a.fillExact(res)
	a.fillGridInfo(res)
}

// fillFits fills each fit that exists with its moments, its comparison
// and its evidence error.
func (a *analysis) fillFits() {
	for i, f := range a.fits {
		out := *f.out
		c := a.cmp[i]
		a.fillFit(out, f.g, f.prec, c)
		switch {
		case a.ref.logZAbsent():
			// log Z is absent (see fillExact).
		case out.LogZ != nil:
			e := *out.LogZ - a.ref.logZ
			out.EvidenceErr = &e
		case out.ELBO != nil:
			e := *out.ELBO - a.ref.logZ
			out.EvidenceErr = &e
		}
		if c.Method == compare.Cubature && !c.Resolved {
			// The grid cannot trace the boundary of the fit's 95 %
			// region either: the coverage it gives would mislead.
			out.Coverage95 = math.NaN()
		}
	}
}

// fillFit fills a fit's moments (fitting scale), interval (original scale)
// and comparison.
func (a *analysis) fillFit(f *Fit, g fit.Gaussian, prec *mat.SymDense, c compare.Result) {
	d := a.d
	f.Mean = slices.Clone(g.Mean)
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
	if a.ref.noise > precisionAbsent {
		f.KLqp, f.KLpq, f.Hellinger = math.NaN(), math.NaN(), math.NaN()
	} else if a.ref.noise > 0 {
		// Below zero only by the rounding noise of log p.
		if f.KLqp < 0 {
			f.KLqp = math.NaN()
		}
		if f.KLpq < 0 {
			f.KLpq = math.NaN()
		}
	}
	if a.ref.unresolved {
		nan := math.NaN()
		f.KLqp, f.KLpq, f.Hellinger, f.Coverage95 = nan, nan, nan, nan
		for k := 0; k < d; k++ {
			f.MeanErrSD[k], f.SDRatio[k] = nan, nan
		}
		return
	}
	for k := 0; k < d; k++ {
		if a.ref.varUnsettled[k] {
			f.MeanErrSD[k], f.SDRatio[k] = math.NaN(), math.NaN()
			// E_p[(z - m)^2] is infinite: so is KL(p||q).
			f.KLpq = math.Inf(1)
		}
	}
}

// fillExact fills the exact posterior on the original scale.
func (a *analysis) fillExact(res *Result) {
	o := &a.ref.original
	d := a.d
	ex := &res.Exact
	ex.LogZ = a.ref.logZ
	ex.LogZErr = a.ref.logZErr + a.ref.tailMass
	if a.ref.tailMass > 1 {
		// More mass seems to lie beyond the box than in it: the density is
		// taken to be improper, and log Z does not exist.
		ex.LogZ, ex.LogZErr = math.NaN(), math.NaN()
		a.diag.add(CodeImproper, SeverityError,
			"The mass beyond the box, extrapolated from its faces, exceeds the mass inside: the density looks improper, so log Z, the evidence errors and the moments that do not settle are not reported.")
	} else if a.ref.logZAbsent() {
		// Mass stays at a face however far it is widened (the improper
		// diagnostic of gridDiagnostics says where): no log Z either.
		ex.LogZ, ex.LogZErr = math.NaN(), math.NaN()
	}
	ex.Mean = slices.Clone(o.Mean)
	ex.MeanErr = slices.Clone(o.MeanErr)
	ex.Cov = copyRows(o.Cov)
	ex.CovErr = copyRows(o.CovErr)
	ex.SD = slices.Clone(o.SD)
	ex.Corr = copyRows(o.Corr)
	ex.Quantiles = slices.Clone(o.Quantiles)
	ex.Skewness = slices.Clone(o.Skewness)
	ex.ExcessKurtosis = slices.Clone(o.ExcessKurtosis)
	ex.GridMode = make([]float64, d)
	for k, z := range a.ref.exactMode {
		ex.GridMode[k] = a.maps[k].ToOriginal(z)
	}
	ex.Mode = a.originalMode(ex.GridMode)
	a.dropOverflow(ex)
	if a.ref.unresolved {
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
		varGone := a.ref.improper(k) || o.TailShare[k] > tailShareAbsent || a.ref.varUnsettled[k]
		meanGone := o.AbsTailShare[k] > absShareAbsent || a.ref.improper(k)
		if a.ref.improper(k) {
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
		if len(a.modes.modes) > 0 {
			return slices.Clone(a.modes.modes[0].X)
		}
		return nanSlice(d)
	}
	starts := [][]float64{gridMode}
	if len(a.modes.modes) > 0 {
		x := make([]float64, d)
		for k := range x {
			x[k] = a.maps[k].ToOriginal(a.modes.modes[0].X[k])
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
	return slices.Clone(ms[0].X)
}

// fillGridInfo describes the grid: its box and points, and its shares of
// edge mass and non-finite points.
func (a *analysis) fillGridInfo(res *Result) {
	g := a.ref.grid
	gi := &res.Grid
	gi.Lo = slices.Clone(g.Box.Lo)
	gi.Hi = slices.Clone(g.Box.Hi)
	gi.Points = slices.Clone(g.N)
	gi.NonFinite = a.ref.nonFinite
	for k := 0; k < a.d; k++ {
		for side := 0; side < 2; side++ {
			if !a.ref.box.Fixed[k][side] || a.pinned[k][side] {
				gi.EdgeMass = math.Max(gi.EdgeMass, a.ref.edgeMass[k][side])
			}
		}
	}
}

// copyRows returns a copy of r that shares no row with it.
func copyRows(r [][]float64) [][]float64 {
	out := make([][]float64, len(r))
	for i := range r {
		out[i] = slices.Clone(r[i])
	}
	return out
}

// nanSlice returns d NaNs.
func nanSlice(d int) []float64 {
	s := make([]float64, d)
	for i := range s {
		s[i] = math.NaN()
	}
	return s
}
