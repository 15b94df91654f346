package engine

import (
	"fmt"
	"math"
	"slices"

	"bellcheck/engine/compare"
	"bellcheck/engine/gauss"
)

// compareFits is the comparison stage: it compares each fit with the
// reference, on the nested rule's node set where the rule stands
// (compare.CompareNodes), else on the grid (compare.Compare); a.cmp holds
// the comparisons in the order of a.fits.
func (a *analysis) compareFits() error {
	a.tr.enter(stageCompare)
	if len(a.fits) == 0 {
		return nil
	}
	qs := make([]*gauss.Prepared, len(a.fits))
	for i, f := range a.fits {
		qs[i] = f.q
	}
	var cmp []compare.Result
	var err error
	if a.ref.onNodes() {
		cmp, err = a.compareOnNodes(qs)
	} else {
		cmp, err = compare.Compare(a.ref.grid, qs, compare.Settings{
			Bounded: slices.Contains(a.bounded, true), Density: a.p, Context: a.ctx, Progress: a.tr.at,
		})
	}
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
		if !a.avail.resolved() {
			// The comparisons are not reported (the reference does not
			// resolve the density): nothing to say of how they were made.
			continue
		}
		if c.Method == compare.OnNodes {
			// A coverage from the rule over q's region stands: every
			// number is reported, each by a rule that resolves it.
			if !c.Resolved && !c.CoverageInBall {
				a.avail.dropAt(QuantityCoverage, f.slot(), CodeFitOffGrid)
				a.diag.add(CodeFitOffGrid, SeverityInfo,
					"The %s fit is narrower than the exact reference's nodes resolve; its Hellinger distance comes from a cubature in its own coordinates, and its coverage is not reported.",
					f.method.term())
			}
			continue
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

// onNodes reports whether the exact posterior is the nested rule's (a
// proper density): the comparison and the plots then use the rule.
func (r *reference) onNodes() bool {
	return r.quad != nil && !r.quad.Improper && r.quad.Nodes != nil && r.quad.Nodes.Len() > 0
}

// compareOnNodes compares the fits with the nested rule's node set. The
// nodes are on the unconstrained scale (a.ref.quadMaps: log or logit where
// the support is bounded), the fits on the fitting scale: per parameter
// the two are the same map, or the fitting scale is the original one, or
// (another scale) the original coordinate is mapped back; log |dy/dz| is
// summed for the Jacobian.
func (a *analysis) compareOnNodes(qs []*gauss.Prepared) ([]compare.Result, error) {
	zmaps, ymaps := a.ref.quadMaps, a.maps
	toFitting := func(z, y []float64) float64 {
		logJ := 0.0
		for k := range z {
			zm, ym := zmaps[k], ymaps[k]
			switch {
			case zm.Scale == ym.Scale && zm.Lo == ym.Lo && zm.Hi == ym.Hi:
				y[k] = z[k]
			case ym.Scale.IsIdentity():
				y[k] = zm.ToOriginal(z[k])
				logJ += zm.LogJacobian(z[k])
			default:
				y[k] = ym.FromOriginal(zm.ToOriginal(z[k]))
				logJ += zm.LogJacobian(z[k]) - ym.LogJacobian(y[k])
			}
		}
		return logJ
	}
	return compare.CompareNodes(a.ref.quad.Nodes, qs, compare.NodeSettings{
		LogZ: a.ref.logZ, ToFitting: toFitting, Mean: a.ref.fitting.Mean, SD: a.ref.fitting.SD,
		Density: a.p, Bounded: slices.Contains(a.bounded, true), Context: a.ctx, Progress: a.tr.at,
	})
}
