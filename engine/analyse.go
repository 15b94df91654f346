package engine

import (
	"context"
	"errors"

	"bellcheck/engine/compare"
	"bellcheck/engine/model"
)

// Errors of Analyse; the fits' and the grid's own errors are wrapped.
var (
	// ErrNoModel means a nil model or one without parameters.
	ErrNoModel = errors.New("engine: no model")
	// ErrOptions means options that do not fit the model: a scale that
	// does not suit a parameter's support, a box outside the support.
	ErrOptions = errors.New("engine: bad options")
)

// Analyse computes the exact posterior on a grid, the Gaussian fits and
// their comparison for a checked model. It stops soon after ctx is
// cancelled and returns ctx's error. progress may be nil.
//
// The stages, each in a file of its own: compile the model and wrap it on
// the fitting scale of each parameter (ScaleOf: the one
// Options.Params[i].Scale names, else log or logit for a bounded parameter,
// with the log-Jacobian; stage_setup.go); find the box
// (grid.FindBox) unless the user set it, evaluate the grid (grid.Evaluate)
// and check what it resolves (stage_reference.go); search the modes from
// the grid's local maxima that hold at least 1e-3 of the mass
// (fit.FindModes; stage_modes.go); fit the Laplace approximation at the
// highest mode, the reverse-KL Gaussian (started from the Laplace fit, or
// the grid's moments where there is none) and its mean-field variant, and
// the forward-KL Gaussian (the grid's moments; stage_fits.go); compare each
// with the grid (compare.Compare; stage_compare.go); settle which exact
// moments exist and polish the mode on the original scale
// (stage_exact.go); assemble the Result from the availability record
// (stage_report.go) with the diagnostics of the grid
// (stage_diagnostics.go); and draw the plots when opts.Plots is set
// (plots.go).
//
// Scales: the stages work on the fitting scale; every number of the Result
// is on the original scale (the grid's nodes weighted by x(z), each fit's
// pushforward through the maps, the modes' and the box's x(z)), and the
// fitting scale's values sit under the fields named fitting_scale.
func Analyse(ctx context.Context, m *model.Model, opts Options, progress ProgressFunc) (*Result, error) {
	return AnalyseEarly(ctx, m, opts, progress, nil)
}

// EarlyFunc receives the early result of AnalyseEarly. The result is the
// caller's: the analysis changes nothing of it afterwards.
type EarlyFunc func(*Result)

// AnalyseEarly is Analyse that also hands over results before the whole
// one, where opts.Plots is set and the plots come from the nested rule:
//
//   - the exact result before the fits (Result.FitsToCome and
//     Plots.PairsToCome set: no fits, no comparisons, no pair plots),
//     where the analysis has run for exactEarlyAfter by then (the fits of a
//     model whose log p is costly, as one with an ode block, take most of
//     its time);
//   - the result before its pair plots (Plots.PairsToCome set), where the
//     model has three or four parameters: the pair marginals (a rule over
//     the other parameters at each of a few hundred points a pair) take a
//     quarter to a third of the analysis.
//
// Each carries the diagnostics so far and the timing to then. The whole
// result follows as Analyse's would; it may hold a diagnostic more, about
// a pair whose contours are not drawn. early may be nil; it is not called
// where the analysis fails first.
func AnalyseEarly(ctx context.Context, m *model.Model, opts Options, progress ProgressFunc, early EarlyFunc) (*Result, error) {
	a := &analysis{ctx: ctx, m: m, opts: opts, tr: newTracker(progress), scout: true, early: early}
	res, err := a.run()
	if errors.Is(err, errFullGrid) {
		// The nested rule did not stand: the grid's results are the
		// exact ones, so the analysis runs again on the full grid.
		a = &analysis{ctx: ctx, m: m, opts: opts, tr: a.tr, early: early}
		res, err = a.run()
	}
	if err != nil {
		return nil, err
	}
	return res, nil
}

// errFullGrid is run's request to run again with the full grid: the
// nested rule did not stand after a scouting grid (stage_quadrature.go).
var errFullGrid = errors.New("engine: the nested rule did not stand; the full grid is needed")

// analysis is the state of one run of Analyse: the run's inputs, and what
// each stage hands to the next.
type analysis struct {
	ctx  context.Context
	m    *model.Model
	opts Options
	tr   *tracker
	// scout asks for a scouting grid, coarser than the default, where the
	// nested rule is expected to give the exact results (setup decides;
	// see scoutPoints).
	scout bool
	diag  diagnostics
	// avail records what the Result leaves out and why: the stages write
	// it, the report reads it (availability.go).
	avail availability

	// problem is the model compiled and wrapped on the fitting scale
	// (stage_setup.go).
	problem
	// ref is the exact posterior (stage_reference.go).
	ref *reference
	// modes is the mode search's outcome (stage_modes.go).
	modes modeSearch
	// fits are the Gaussian fits that exist (stage_fits.go), and cmp their
	// comparisons with the reference, in the same order (stage_compare.go).
	fits []fitted
	cmp  []compare.Result
	// mode is the exact mode on the original scale (stage_exact.go).
	mode []float64
	// early, when set, receives the result before its pair plots
	// (AnalyseEarly; plots_rule.go).
	early EarlyFunc
	// ruleExact holds the exact marginals' plots once drawn (ruleMarginals,
	// plots_rule.go): the exact result handed over before the fits and
	// the whole result share them.
	ruleExact *exactPlots
	// undefinedHinted: a message has told how to declare a support where
	// log p is undefined (undefinedHint).
	undefinedHinted bool
}

// run runs the stages in order.
func (a *analysis) run() (*Result, error) {
	a.tr.enter(stageCompile)
	if err := a.setup(); err != nil {
		return nil, err
	}
	if err := a.checkCandidates(); err != nil {
		return nil, err
	}
	live, err := a.liveConstants()
	if err != nil {
		return nil, err
	}
	if err := a.findReference(); err != nil {
		return nil, err
	}
	if err := a.findModes(); err != nil {
		return nil, err
	}
	a.checkODESteps()
	if useQuadrature {
		if err := a.exactByQuadrature(); err != nil {
			return nil, err
		}
	}
	a.checkMassEarly()
	if err := a.handOverExact(live); err != nil {
		return nil, err
	}
	if err := a.fitAll(); err != nil {
		return nil, err
	}
	a.addCandidates()
	if err := a.compareFits(); err != nil {
		return nil, err
	}
	a.settleExact()
	res := a.report()
	res.Live = live
	a.fillCosts(res)
	a.compareCurvatures(res)
	a.noteSeveralModes()
	a.gridDiagnostics()
	if a.opts.Plots {
		a.tr.enter(stagePlots)
		if err := a.ctx.Err(); err != nil {
			return nil, err
		}
		pl, err := a.plots(res, func(marginals []Marginal1D) {
			first := *res
			first.Plots = &Plots{Marginals: marginals, PairsToCome: true}
			first.Diagnostics = a.diag.sorted()
			first.Timing = a.tr.snapshot()
			a.early(&first)
		})
		if err != nil {
			return nil, err
		}
		res.Plots = pl
	}
	res.Diagnostics = a.diag.sorted()
	res.Timing = a.tr.done()
	return res, nil
}
