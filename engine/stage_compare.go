package engine

import (
	"errors"
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/mat"

	"bellcheck/engine/compare"
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
		if err := degenerate(f.g.Cov); err != nil {
			*f.out = nil
			a.avail.drop(f.method.quantity(), CodeFitFailed)
			a.diag.add(CodeFitFailed, SeverityError, "No %s fit: its covariance is degenerate (%v).", f.method.term(), err)
			continue
		}
		kept = append(kept, f)
	}
	a.fits = kept
	if len(a.fits) == 0 {
		return nil
	}
	qs := make([]compare.Gaussian, len(a.fits))
	for i, f := range a.fits {
		qs[i] = compare.Gaussian{Mean: f.g.Mean, Cov: f.g.Cov}
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
		if a.ref.noise > 0 {
			// Below zero only by the rounding noise of log p.
			if c.KLqp < 0 {
				a.avail.dropAt(QuantityKLqp, int(f.method), CodeLostPrecision)
			}
			if c.KLpq < 0 {
				a.avail.dropAt(QuantityKLpq, int(f.method), CodeLostPrecision)
			}
		}
		if c.Method != compare.Cubature {
			continue
		}
		if !c.Resolved {
			a.avail.dropAt(QuantityCoverage, int(f.method), CodeFitOffGrid)
			a.diag.add(CodeFitOffGrid, SeverityInfo,
				"The %s fit is narrower than the grid resolves; its KL(q||p) and Hellinger distance come from a cubature in its own coordinates, and its coverage is not reported.",
				f.method.term())
		} else {
			a.diag.add(CodeFitOffGrid, SeverityInfo,
				"The %s fit has about %s of its mass outside the grid's box; its KL(q||p) comes from a cubature in its own coordinates.",
				f.method.term(), share(math.Abs(1-c.QMass)))
		}
	}
	return nil
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
