package engine

import (
	"fmt"
	"math"
	"slices"
	"strings"

	"bellcheck/engine/compare"
	"bellcheck/engine/fit"
	"bellcheck/engine/gauss"
)

// compareFits is the comparison stage: it compares each fit with the
// reference (compare.Compare), leaving out a fit whose covariance is
// degenerate beyond its scales (a correlation matrix that cannot be
// inverted): the comparison cannot use it, and the other fits still stand.
// a.cmp holds the comparisons in the order of a.fits.
func (a *analysis) compareFits() error {
	a.tr.enter(stageCompare)
	kept := a.fits[:0]
	for _, f := range a.fits {
		q, err := gauss.Prepare(f.g)
		if err != nil {
			*f.out = nil
			why := strings.TrimPrefix(err.Error(), gauss.ErrBad.Error()+": ")
			a.diag.add(CodeFitFailed, SeverityError, "No %s fit: its covariance is degenerate (%s).", fitLabel(f.name), why)
			continue
		}
		f.q = q
		kept = append(kept, f)
	}
	a.fits = kept
	if len(a.fits) == 0 {
		return nil
	}
	qs := make([]*gauss.Prepared, len(a.fits))
	for i, f := range a.fits {
		qs[i] = f.q
	}
	cmp, err := compare.Compare(a.ref.grid, qs, compare.Settings{
		Bounded: slices.Contains(a.bounded, true), Density: a.p, Context: a.ctx, Progress: a.tr.at,
	})
	if err != nil {
		if ctxErr := a.ctx.Err(); ctxErr != nil {
			return ctxErr
		}
		return fmt.Errorf("engine: comparing the fits: %w", err)
	}
	a.cmp = cmp
	for i, f := range a.fits {
		c := cmp[i]
		if c.Method != compare.Cubature {
			continue
		}
		if !c.Resolved {
			a.diag.add(CodeFitOffGrid, SeverityInfo,
				"The %s fit is narrower than the grid resolves; its KL(q||p) and Hellinger distance come from a cubature in its own coordinates, and its coverage is not reported.",
				fitLabel(f.name))
		} else {
			a.diag.add(CodeFitOffGrid, SeverityInfo,
				"The %s fit has about %s of its mass outside the grid's box; its KL(q||p) comes from a cubature in its own coordinates.",
				fitLabel(f.name), share(math.Abs(1-c.QMass)))
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
	if a.ref.unresolved {
		return
	}
	lz := a.ref.logZ
	tol := 1e-6*(1+math.Abs(lz)) + 3*a.ref.logZErr
	for _, vf := range fits {
		if vf == nil || !vf.Converged || !(vf.ELBO > lz+tol) {
			continue
		}
		a.ref.unresolved = true
		a.ref.noVariance = true
		for k := range a.ref.varUnsettled {
			a.ref.varUnsettled[k] = true
		}
		a.diag.add(CodeUnresolved, SeverityError,
			"A reverse-KL fit's ELBO, a lower bound on log Z, exceeds the grid's log Z by %.3g: the grid has missed part of the mass (a peak narrower than its spacing, near %s) or the fit's cubature erred, so log Z, the exact moments and the fits' comparisons with them are not reported.",
			vf.ELBO-lz, a.pointString(vf.Mean))
		return
	}
}

// fitLabel is a fit's name in a sentence.
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
