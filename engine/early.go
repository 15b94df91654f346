package engine

import (
	"maps"
	"slices"
	"time"
)

// exactEarlyAfter is how long an analysis must have run by the end of its
// exact reference for AnalyseEarly to hand over the exact result before
// the fits (handOverExact). The fits take the Hessian of log p at every
// cubature node, so where the reference took this long they usually take
// longer still (the README's Lorenz-63 cost: the reference within 11 s,
// the fits 27 s more, natively). Each result handed over costs a drawing
// (tens of milliseconds in the page, and in the worker its figures before
// the whole result's): below a few seconds of work that would delay the
// whole result of a 4-D example for little.
var exactEarlyAfter = 2 * time.Second

// handOverExact passes AnalyseEarly's caller the exact result before the
// fits: the reference's numbers as settleExact would leave them, the modes,
// the diagnostics so far and the exact plots (Result.FitsToCome): from the
// nested rule the marginals (Plots.PairsToCome; they are kept for the whole
// result), from the grid the marginals and pairs. It runs only where the
// caller asked for plots and the analysis has run for exactEarlyAfter.
// settleExact runs on copies of the availability record and the
// diagnostics, which are put back: it runs again in its place after the
// fits, and the whole result is what it would be without this.
func (a *analysis) handOverExact(live []LiveConstant) error {
	if a.early == nil || !a.opts.Plots || time.Since(a.tr.start) < exactEarlyAfter {
		return nil
	}
	fromRule := a.ref.onNodes() && !a.ref.gridCurves
	if !fromRule && a.ref.grid == nil {
		return nil
	}
	var pl *Plots
	if fromRule {
		marginals, _, err := a.ruleMarginals(func(int) { a.tr.beat() })
		if err != nil {
			return err
		}
		pl = &Plots{Marginals: slices.Clone(marginals), PairsToCome: a.d > 1}
	}
	avail, diag, mode := a.avail.clone(), a.diag.clone(), a.mode
	a.settleExact()
	res := a.report()
	res.Modes = slices.Clone(res.Modes) // fillCosts writes into them
	res.Live = live
	a.fillCosts(res)
	res.FitsToCome = true
	a.noteSeveralModes()
	var err error
	if !fromRule {
		// The grid's plots, pairs and all: sums it holds already.
		pl, err = a.plots(res, nil)
	}
	res.Diagnostics = a.diag.sorted()
	a.avail, a.diag, a.mode = avail, diag, mode
	if err != nil {
		return err
	}
	res.Plots = pl
	res.Timing = a.tr.snapshot()
	a.early(res)
	return nil
}

// clone returns an independent copy of the record.
func (av *availability) clone() availability {
	return availability{absent: maps.Clone(av.absent)}
}

// clone returns an independent copy of the diagnostics.
func (d *diagnostics) clone() diagnostics {
	return diagnostics{list: slices.Clone(d.list), seen: maps.Clone(d.seen)}
}
