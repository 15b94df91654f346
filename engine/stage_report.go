package engine

import (
	"math"
	"slices"

	"bellcheck/engine/compare"
	"bellcheck/engine/fit"
)

// report assembles the Result from what the stages handed on and the
// availability record: the modes, each fit's moments and comparison, the
// exact posterior and the grid's description. The diagnostics and the
// timing are added at the end of the run.
func (a *analysis) report() *Result {
	res := &Result{Params: a.names, Form: a.m.Form.String(), Scales: a.scales, Modes: a.modes.modes}
	a.fillFits(res)
	a.fillExact(res)
	a.fillGridInfo(res)
	return res
}

// fillFits puts each fit that exists in the Result with its run, its
// moments, its comparison and its evidence error.
func (a *analysis) fillFits(res *Result) {
	for i, f := range a.fits {
		out := new(Fit)
		*out = f.run
		res.Fits[f.method] = out
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

// fillFit fills a fit's moments (fitting scale), interval (original scale)
// and comparison, leaving out what the record says is absent.
func (a *analysis) fillFit(f *Fit, fd fitted, c compare.Result) {
	d := a.d
	g, m := fd.g, int(fd.method)
	f.Mean = slices.Clone(g.Mean)
	f.Cov = fit.Rows(g.Cov)
	f.SD = g.SD()
	f.Corr = fit.Rows(g.Corr())
	f.Interval95 = make([][2]float64, d)
	for k := 0; k < d; k++ {
		iv := g.Interval(k, 0.95)
		f.Interval95[k] = [2]float64{a.maps[k].ToOriginal(iv[0]), a.maps[k].ToOriginal(iv[1])}
	}
	if fd.prec != nil {
		f.Precision = fit.Rows(fd.prec)
	}
	f.KLqp, f.KLpq, f.Hellinger = c.KLqp, c.KLpq, c.Hellinger
	f.MeanErrSD, f.SDRatio = c.MeanErrSD, c.SDRatio
	f.Coverage95 = c.Coverage95
	nan := math.NaN()
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
	if !a.avail.present(QuantityComparison) {
		f.KLqp, f.KLpq, f.Hellinger, f.Coverage95 = nan, nan, nan, nan
		for k := 0; k < d; k++ {
			f.MeanErrSD[k], f.SDRatio[k] = nan, nan
		}
		return
	}
	for k := 0; k < d; k++ {
		if !a.avail.presentAt(QuantityAxisErrors, k) {
			f.MeanErrSD[k], f.SDRatio[k] = nan, nan
			// E_p[(z - m)^2] is infinite: so is KL(p||q).
			f.KLpq = math.Inf(1)
		}
	}
}

// fillExact fills the exact posterior on the original scale, leaving out
// what the record says is absent.
func (a *analysis) fillExact(res *Result) {
	o := &a.ref.original
	d := a.d
	ex := &res.Exact
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
