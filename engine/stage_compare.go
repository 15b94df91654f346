package engine

import (
	"fmt"
	"math"
	"slices"

	"bellcheck/engine/compare"
	"bellcheck/engine/gauss"
)

// compareFits is the comparison stage: it compares each fit with the
// reference (compare.Compare); a.cmp holds the comparisons in the order of
// a.fits.
func (a *analysis) compareFits() error {
	a.tr.enter(stageCompare)
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
	if a.ref.quad != nil {
		// The exact moments are the nested rule's: the mean errors and sd
		// ratios are measured against them, not against the grid's.
		// On a parameter fitted on its own scale, against the moments the
		// Result reports as exact (the original scale's).
		for i, f := range a.fits {
			for k := 0; k < a.d; k++ {
				ex := &a.ref.fitting
				if a.maps[k].Scale.IsIdentity() {
					ex = &a.ref.original
				}
				cmp[i].MeanErrSD[k] = (f.g.Mean[k] - ex.Mean[k]) / ex.SD[k]
				cmp[i].SDRatio[k] = math.Sqrt(f.g.Cov.At(k, k)) / ex.SD[k]
			}
		}
	}
	for i, f := range a.fits {
		c := cmp[i]
		if a.ref.noise > 0 {
			// Below zero only by the rounding noise of log p.
			if c.KLqp < 0 {
				a.avail.dropAt(QuantityKLqp, f.slot(), CodeLostPrecision)
			}
			if c.KLpq < 0 {
				a.avail.dropAt(QuantityKLpq, f.slot(), CodeLostPrecision)
			}
		}
		if c.Method != compare.Cubature {
			continue
		}
		if !c.Resolved {
			a.avail.dropAt(QuantityCoverage, f.slot(), CodeFitOffGrid)
			a.diag.add(CodeFitOffGrid, SeverityInfo,
				"%s is narrower than the grid resolves; its KL(q||p) and Hellinger distance come from a cubature in its own coordinates, and its coverage is not reported.",
				capitalise(f.noun()))
		} else {
			a.diag.add(CodeFitOffGrid, SeverityInfo,
				"%s has about %s of its mass outside the grid's box; its KL(q||p) comes from a cubature in its own coordinates.",
				capitalise(f.noun()), share(math.Abs(1-c.QMass)))
		}
	}
	return nil
}
