package engine

import (
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/mat"

	"bellcheck/engine/compare"
	"bellcheck/engine/fit"
	"bellcheck/engine/gauss"
	"bellcheck/engine/transform"
)

// report assembles the Result from what the stages handed on: each fit's
// moments and comparison, the exact posterior and the grid's description.
func (a *analysis) report(res *Result) {
	a.fillFits()
	a.dropFitOverflow()
	a.fillExact(res)
	a.fillOriginalErrors(res)
	a.fillGridInfo(res)
}

// fillFits fills each fit that exists with its moments, its comparison
// and its evidence error.
func (a *analysis) fillFits() {
	for i, f := range a.fits {
		out := *f.out
		c := a.cmp[i]
		a.fillFit(out, f.q, f.prec, c)
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

// fillFit fills a fit's normal on the fitting scale and its comparison
// there, and its moments and interval on the original scale (the
// pushforward through each parameter's map).
func (a *analysis) fillFit(f *Fit, q *gauss.Prepared, prec *mat.SymDense, c compare.Result) {
	d := a.d
	g := q.Gaussian
	fs := &f.FittingScale
	fs.Mean = slices.Clone(g.Mean)
	fs.Cov = gauss.Rows(g.Cov)
	fs.SD = g.SD()
	fs.Corr = gauss.Rows(g.Corr())
	f.Mean, f.SD = make([]float64, d), make([]float64, d)
	f.Interval95 = make([][2]float64, d)
	for k := 0; k < d; k++ {
		f.Mean[k], f.SD[k] = a.maps[k].Pushforward(g.Mean[k], fs.SD[k])
		f.Interval95[k] = a.maps[k].Interval(g.Interval(k, 0.95))
	}
	f.Cov, f.Corr = make([][]float64, d), make([][]float64, d)
	for k := 0; k < d; k++ {
		f.Cov[k], f.Corr[k] = make([]float64, d), make([]float64, d)
		for l := 0; l < d; l++ {
			switch {
			case k == l && a.maps[k].Scale.IsIdentity():
				f.Cov[k][k] = fs.Cov[k][k]
			case k == l:
				f.Cov[k][k] = f.SD[k] * f.SD[k]
			default:
				f.Cov[k][l] = transform.Covariance(a.maps[k], a.maps[l], g.Mean[k], g.Mean[l], fs.SD[k], fs.SD[l], fs.Cov[k][l])
			}
		}
	}
	for k := 0; k < d; k++ {
		for l := 0; l < d; l++ {
			if k == l {
				f.Corr[k][l] = 1
			} else {
				f.Corr[k][l] = f.Cov[k][l] / (f.SD[k] * f.SD[l])
			}
		}
	}
	if prec != nil {
		f.Precision = gauss.Rows(prec)
	}
	f.KLqp, f.KLpq, f.Hellinger = c.KLqp, c.KLpq, c.Hellinger
	fs.MeanErrSD, fs.SDRatio = c.MeanErrSD, c.SDRatio
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
	nan := math.NaN()
	for k := 0; k < d; k++ {
		switch {
		case a.ref.unresolved:
			fs.MeanErrSD[k], fs.SDRatio[k] = nan, nan
		case a.ref.varUnsettled[k]:
			fs.MeanErrSD[k], fs.SDRatio[k] = nan, nan
			// E_p[(z - m)^2] is infinite: so is KL(p||q).
			f.KLpq = math.Inf(1)
		}
	}
	if a.ref.unresolved {
		f.KLqp, f.KLpq, f.Hellinger, f.Coverage95 = nan, nan, nan, nan
	}
	// On the original scale the same where a parameter is fitted as it is;
	// fillOriginalErrors fills the others.
	f.MeanErrSD, f.SDRatio = slices.Clone(fs.MeanErrSD), slices.Clone(fs.SDRatio)
}

// dropFitOverflow makes absent, with a diagnostic, a fit's moments on the
// original scale that fall outside double precision (a log-scale normal
// whose mean or spread reaches z > 709, where e^z overflows, or whose
// variance underflows to zero): the normal on the fitting scale and the
// interval stay.
func (a *analysis) dropFitOverflow() {
	bad := func(v float64) bool { return math.IsNaN(v) || math.IsInf(v, 0) }
	var names []string
	for _, fi := range a.fits {
		f := *fi.out
		var over []string
		for k := 0; k < a.d; k++ {
			// A variance that underflows to zero is no more representable.
			if !(f.Cov[k][k] > 0) || !(f.SD[k] > 0) {
				f.Cov[k][k], f.SD[k] = math.NaN(), math.NaN()
			}
			rowBad := bad(f.Mean[k]) || bad(f.SD[k])
			for l := 0; l < a.d; l++ {
				rowBad = rowBad || bad(f.Cov[k][l])
			}
			if !rowBad {
				continue
			}
			over = append(over, a.names[k])
			nan := math.NaN()
			if bad(f.Mean[k]) {
				f.Mean[k] = nan
			}
			if bad(f.SD[k]) || bad(f.Cov[k][k]) {
				f.SD[k] = nan
			}
			for l := 0; l < a.d; l++ {
				if bad(f.Cov[k][l]) || bad(f.Cov[k][k]) || bad(f.Cov[l][l]) {
					f.Cov[k][l], f.Cov[l][k], f.Corr[k][l], f.Corr[l][k] = nan, nan, nan, nan
				}
			}
		}
		if len(over) > 0 {
			names = append(names, fmt.Sprintf("the %s fit's %s", fitLabel(fi.name), list(over)))
		}
	}
	if len(names) > 0 {
		a.diag.add(CodeOverflow, SeverityWarning,
			"The moments on the original scale of %s fall outside double precision (the fitted normal reaches values too large or too small to exponentiate), so those are not reported; the normal on the fitting scale and its interval are.", list(names))
	}
}

// fillOriginalErrors fills each fit's mean and spread errors on the
// original scale for the parameters fitted on another: the fit's
// pushforward mean and sd against the exact ones (absent where those are).
func (a *analysis) fillOriginalErrors(res *Result) {
	ex := &res.Exact
	for _, f := range a.fits {
		out := *f.out
		for k := 0; k < a.d; k++ {
			if a.maps[k].Scale.IsIdentity() {
				continue
			}
			out.MeanErrSD[k] = (out.Mean[k] - ex.Mean[k]) / ex.SD[k]
			out.SDRatio[k] = out.SD[k] / ex.SD[k]
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
		if !m.Scale.IsIdentity() {
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
		starts = append(starts, slices.Clone(a.modes.modes[0].X))
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
	gi.FittingScale.Lo = slices.Clone(g.Box.Lo)
	gi.FittingScale.Hi = slices.Clone(g.Box.Hi)
	gi.Lo, gi.Hi = make([]float64, a.d), make([]float64, a.d)
	for k := 0; k < a.d; k++ {
		gi.Lo[k], gi.Hi[k] = a.maps[k].ToOriginal(g.Box.Lo[k]), a.maps[k].ToOriginal(g.Box.Hi[k])
	}
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
