package engine

import (
	"math"
	"slices"

	"bellcheck/engine/compare"
	"bellcheck/engine/gauss"
	"bellcheck/engine/transform"
)

// report assembles the Result from what the stages handed on and the
// availability record: the modes, each fit's moments and comparison, the
// exact posterior and the grid's description. The diagnostics and the
// timing are added at the end of the run.
func (a *analysis) report() *Result {
	res := &Result{Params: a.names, Form: a.m.Form.String(), Scales: a.scales, Modes: a.modes.modes}
	if !a.avail.present(QuantityModeMass) {
		res.Modes = slices.Clone(res.Modes)
		for i := range res.Modes {
			res.Modes[i].Mass = math.NaN()
		}
	}
	a.pushFits()
	a.fillFits(res)
	a.fillExact(res)
	a.fillOriginalErrors(res)
	a.fillGridInfo(res)
	return res
}

// fillFits puts each fit that exists in the Result with its run, its
// moments, its comparison and its evidence error.
func (a *analysis) fillFits(res *Result) {
	for i, f := range a.fits {
		out := new(Fit)
		*out = f.run
		*a.place(res, f) = out
		a.fillFit(out, f, a.cmp[i])
		if !a.avail.present(QuantityLogZ) {
			continue
		}
		switch {
		case out.LogZ != nil:
			e := *out.LogZ - a.ref.logZ
			out.EvidenceErr = &e
		case out.ELBO != nil:
			e := *out.ELBO - a.ref.logZ
			out.EvidenceErr = &e
		}
	}
}

// fillFit fills a fit's normal on the fitting scale and its comparison
// there, and its moments and interval on the original scale (the
// pushforward through each parameter's map), leaving out what the record
// says is absent.
func (a *analysis) fillFit(f *Fit, fd fitted, c compare.Result) {
	d := a.d
	g, m := fd.g, fd.slot()
	fs := &f.FittingScale
	fs.Mean = slices.Clone(g.Mean)
	fs.Cov = gauss.Rows(g.Cov)
	fs.SD = g.SD()
	fs.Corr = gauss.Rows(g.Corr())
	f.Mean, f.SD, f.Cov, f.Corr = fd.orig.mean, fd.orig.sd, fd.orig.cov, fd.orig.corr
	f.Interval95 = make([][2]float64, d)
	for k := 0; k < d; k++ {
		f.Interval95[k] = a.maps[k].Interval(g.Interval(k, 0.95))
	}
	if fd.prec != nil {
		f.Precision = gauss.Rows(fd.prec)
	}
	nan := math.NaN()
	for k := 0; k < d; k++ {
		if _, gone := a.avail.absent[entry{QuantityFitMoments, m, k}]; gone {
			f.Mean[k], f.SD[k] = nan, nan
			for l := 0; l < d; l++ {
				f.Cov[k][l], f.Cov[l][k], f.Corr[k][l], f.Corr[l][k] = nan, nan, nan, nan
			}
		}
	}
	f.KLqp, f.KLpq, f.Hellinger = c.KLqp, c.KLpq, c.Hellinger
	fs.MeanErrSD, fs.SDRatio = c.MeanErrSD, c.SDRatio
	f.Coverage95 = c.Coverage95
	if !a.avail.presentAt(QuantityKLqp, m) {
		f.KLqp = nan
	}
	if !a.avail.presentAt(QuantityKLpq, m) {
		f.KLpq = nan
	}
	if !a.avail.presentAt(QuantityHellinger, m) {
		f.Hellinger = nan
	}
	if !a.avail.presentAt(QuantityCoverage, m) {
		// The grid cannot trace the boundary of the fit's 95 % region:
		// the coverage it gives would mislead.
		f.Coverage95 = nan
	}
	for k := 0; k < d; k++ {
		switch {
		case !a.avail.present(QuantityComparison):
			fs.MeanErrSD[k], fs.SDRatio[k] = nan, nan
		case !a.avail.presentAt(QuantityAxisErrors, k):
			fs.MeanErrSD[k], fs.SDRatio[k] = nan, nan
			// E_p[(z - m)^2] is infinite: so is KL(p||q).
			f.KLpq = math.Inf(1)
		}
	}
	if !a.avail.present(QuantityComparison) {
		f.KLqp, f.KLpq, f.Hellinger, f.Coverage95 = nan, nan, nan, nan
	}
	// On the original scale the same where a parameter is fitted as it is;
	// fillOriginalErrors fills the others.
	f.MeanErrSD, f.SDRatio = slices.Clone(fs.MeanErrSD), slices.Clone(fs.SDRatio)
}

// pushed is a normal's moments on the original scale.
type pushed struct {
	mean, sd  []float64
	cov, corr [][]float64
}

// pushFits computes each fit's moments on the original scale and records
// as absent, with a diagnostic, those that fall outside double precision
// (a log-scale normal that reaches z > 709, where e^z overflows, or whose
// variance underflows to zero).
func (a *analysis) pushFits() {
	var names []string
	for i := range a.fits {
		fd := &a.fits[i]
		var p pushed
		p.mean, p.sd, p.cov, p.corr = a.pushforward(fd.g)
		fd.orig = p
		var over []string
		for k := 0; k < a.d; k++ {
			// The variance must be a positive normal double, as the
			// exact one (dropOverflow): a subnormal one has lost its
			// precision, and its sd no longer squares to it (fuzz corpus
			// cb79ff2f50f93a44: a variance of 1.2e-320).
			ok := finite(p.mean[k]) && p.sd[k] > 0 && finite(p.sd[k]) && p.cov[k][k] >= 0x1p-1022
			for l := 0; l < a.d; l++ {
				ok = ok && finite(p.cov[k][l])
			}
			if !ok {
				a.avail.set(entry{QuantityFitMoments, fd.slot(), k}, CodeOverflow)
				over = append(over, a.names[k])
			}
		}
		if len(over) > 0 {
			names = append(names, fd.noun()+"'s "+list(over))
		}
	}
	if len(names) > 0 {
		a.diag.add(CodeOverflow, SeverityWarning,
			"The moments on the original scale of %s fall outside double precision (the fitted normal reaches values too large or too small to exponentiate), so those are not reported; the normal on the fitting scale and its interval are.", list(names))
	}
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// pushforward returns the moments on the original scale of the normal g:
// the mean and sd of each parameter through its map
// (transform.Map.Pushforward), the covariance of each pair
// (transform.Covariance) and the correlation. Where a parameter is fitted
// as it is, its numbers are g's own.
func (a *analysis) pushforward(g gauss.Gaussian) (mean, s []float64, c, corr [][]float64) {
	d := a.d
	sd, cov := g.SD(), gauss.Rows(g.Cov)
	mean, s = make([]float64, d), make([]float64, d)
	for k := 0; k < d; k++ {
		mean[k], s[k] = a.maps[k].Pushforward(g.Mean[k], sd[k])
	}
	c, corr = make([][]float64, d), make([][]float64, d)
	for k := 0; k < d; k++ {
		c[k], corr[k] = make([]float64, d), make([]float64, d)
		for l := 0; l < d; l++ {
			switch {
			case k == l && a.maps[k].Scale.IsIdentity():
				c[k][k] = cov[k][k]
			case k == l:
				c[k][k] = s[k] * s[k]
			default:
				c[k][l] = transform.Covariance(a.maps[k], a.maps[l], g.Mean[k], g.Mean[l], sd[k], sd[l], cov[k][l])
			}
		}
	}
	for k := 0; k < d; k++ {
		for l := 0; l < d; l++ {
			if k == l {
				corr[k][l] = 1
			} else {
				corr[k][l] = c[k][l] / (s[k] * s[l])
			}
		}
	}
	return mean, s, c, corr
}

// fillOriginalErrors fills each fit's mean and spread errors on the
// original scale for the parameters fitted on another: the fit's
// pushforward mean and sd against the exact ones (absent where those are).
func (a *analysis) fillOriginalErrors(res *Result) {
	ex := &res.Exact
	for _, fd := range a.fits {
		out := *a.place(res, fd)
		for k := 0; k < a.d; k++ {
			if a.maps[k].Scale.IsIdentity() {
				continue
			}
			out.MeanErrSD[k] = (out.Mean[k] - ex.Mean[k]) / ex.SD[k]
			out.SDRatio[k] = out.SD[k] / ex.SD[k]
		}
	}
}

// fillExact fills the exact posterior on the original scale, leaving out
// what the record says is absent.
func (a *analysis) fillExact(res *Result) {
	o := &a.ref.original
	d := a.d
	ex := &res.Exact
	ex.Rule = a.ref.onNodes()
	ex.LogZ = a.ref.logZ
	ex.LogZErr = a.ref.logZErr + a.ref.tailMass
	nan := math.NaN()
	if !a.avail.present(QuantityLogZ) {
		ex.LogZ, ex.LogZErr = nan, nan
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
	ex.Mode = a.mode
	for k := 0; k < d; k++ {
		if !a.avail.presentAt(QuantityMean, k) {
			ex.Mean[k], ex.MeanErr[k] = nan, nan
		}
		if !a.avail.presentAt(QuantityQuantiles, k) {
			ex.Quantiles[k] = [3]float64{nan, nan, nan}
		}
		if !a.avail.presentAt(QuantityVariance, k) {
			ex.SD[k] = nan
		}
		if !a.avail.presentAt(QuantitySkewness, k) {
			ex.Skewness[k] = nan
		}
		if !a.avail.presentAt(QuantityKurtosis, k) {
			ex.ExcessKurtosis[k] = nan
		}
		for l := 0; l < d; l++ {
			if !a.avail.presentAt(QuantityVariance, k) || !a.avail.presentAt(QuantityVariance, l) ||
				!a.avail.presentPair(QuantityCovariance, k, l) {
				ex.Cov[k][l], ex.CovErr[k][l], ex.Corr[k][l] = nan, nan, nan
			}
		}
	}
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
	gi.Scouted = a.ref.onNodes() && a.scout
	for k := 0; k < a.d; k++ {
		for side := 0; side < 2; side++ {
			if !a.ref.box.Fixed[k][side] || a.pinned[k][side] {
				gi.EdgeMass = max(gi.EdgeMass, a.ref.edgeMass[k][side])
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
