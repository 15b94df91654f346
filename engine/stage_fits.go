package engine

import (
	"errors"
	"fmt"
	"math"
	"runtime"
	"slices"
	"strings"

	"gonum.org/v1/gonum/mat"

	"bellcheck/engine/fit"
	"bellcheck/engine/gauss"
	"bellcheck/engine/target"
)

// fitted is one Gaussian fit that exists, as the fits stage hands it on:
// its method, the Gaussian on the fitting scale, the curvature it uses
// (nil for the forward-KL fit), the run that made it (run's moments and
// comparison are filled by the report), its prepared form q (set once the
// fits stage has checked it) and its moments on the original scale (the
// report stage's pushforward).
type fitted struct {
	method Method
	g      gauss.Gaussian
	prec   *mat.SymDense
	run    Fit
	q      *gauss.Prepared
	orig   pushed
	// candidate is the name of a user's Gaussian (candidate.go), "" for a
	// fit method; index is its place in Options.Candidates.
	candidate string
	index     int
}

// fitAll is the fits stage: the Laplace fit at the highest mode, the
// reverse-KL fit and its mean-field variant, and the forward-KL fit (the
// reference's moments).
func (a *analysis) fitAll() error {
	lap := a.fitLaplace()
	rev, mfit, infiniteKL, err := a.fitReverse(lap)
	if err != nil {
		return err
	}
	a.checkELBO(rev, mfit)
	a.checkMassFitted(rev)
	a.fitForward()
	if err := a.fitEP(); err != nil {
		return err
	}
	a.boundedKL(infiniteKL)
	a.dropDegenerate()
	return nil
}

// helpers returns an independent copy of the density for the fits'
// cubature where the program has more than one processor (fit.Settings.
// Helpers), else nil: in the browser the passes run whole on the page's
// or the worker's one thread.
func (a *analysis) helpers() []target.Density {
	if runtime.GOMAXPROCS(0) < 2 {
		return nil
	}
	return []target.Density{a.p.Clone()}
}

// dropDegenerate prepares each fit's Gaussian (gauss.Prepare) and leaves
// out a fit whose covariance is degenerate beyond its scales (a correlation
// matrix that cannot be inverted): the comparison cannot use it, and the
// other fits still stand.
func (a *analysis) dropDegenerate() {
	kept := a.fits[:0]
	for _, f := range a.fits {
		q, err := gauss.Prepare(f.g)
		if err != nil {
			a.avail.drop(f.method.quantity(), CodeFitFailed)
			why := strings.TrimPrefix(err.Error(), gauss.ErrBad.Error()+": ")
			a.diag.add(CodeFitFailed, SeverityError, "No %s fit: its covariance is degenerate (%s).", f.method.term(), why)
			continue
		}
		f.q = q
		kept = append(kept, f)
	}
	a.fits = kept
}

// checkELBO compares the ELBO of each converged reverse-KL fit with the
// grid's log Z: the ELBO is a lower bound on log Z for every Gaussian
// (Jensen's inequality), so an ELBO above log Z by more than the grid's
// error estimate means that the grid missed mass the fit found (a peak
// narrower than the grid's spacing, between its nodes), or that the fit's
// cubature erred. Either way the grid's results cannot stand: they are
// recorded as absent for want of resolution, and the forward-KL fit, made
// from them, is not made.
func (a *analysis) checkELBO(fits ...*fit.VariationalFit) {
	if !a.avail.resolved() && a.ref.quad == nil {
		// (With the nested rule's results the check still applies: the
		// grid's lack of resolution left only the comparisons out.)
		return
	}
	lz := a.ref.logZ
	tol := 1e-6*(1+math.Abs(lz)) + 3*a.ref.logZErr
	for _, vf := range fits {
		if vf == nil || !vf.Converged || !(vf.ELBO > lz+tol) {
			continue
		}
		a.avail.dropUnresolved()
		a.diag.add(CodeUnresolved, SeverityError,
			"A reverse-KL fit's ELBO, a lower bound on log Z, exceeds the grid's log Z by %.3g: the grid has missed part of the mass (a peak narrower than its spacing, near %s) or the fit's cubature erred, so log Z, the exact moments and the fits' comparisons with them are not reported.",
			vf.ELBO-lz, a.pointString(vf.Mean))
		return
	}
}

// fitLaplace fits the Laplace approximation at the highest mode; nil where
// there is none, with a diagnostic saying why.
func (a *analysis) fitLaplace() *fit.LaplaceFit {
	a.tr.enter(stageLaplace)
	if len(a.modes.fitModes) == 0 {
		a.avail.drop(Laplace.quantity(), CodeNoMode)
		return nil
	}
	m := a.modes.fitModes[0]
	lf, err := fit.Laplace(m)
	switch {
	case err == nil:
		lz := lf.LogZ
		run := Fit{LogZ: &lz, Iterations: m.Iterations, Converged: m.Converged, Residual: m.GradNorm}
		a.fits = append(a.fits, fitted{method: Laplace, g: lf.Gaussian, prec: lf.Precision, run: run})
		return &lf
	case errors.Is(err, fit.ErrOnBound):
		a.avail.drop(Laplace.quantity(), CodeModeOnBound)
		a.diag.add(CodeModeOnBound, SeverityWarning,
			"No Laplace fit: the highest mode, at %s, lies on a bound of the support, where the curvature does not describe the density.", a.pointString(m.X))
	case errors.Is(err, fit.ErrNotPositiveDefinite):
		why := "-Hessian there is not positive definite, so the point is not a strict maximum"
		if m.Flat {
			why = "the curvature there is numerically zero (the density is flatter than a Gaussian at its peak)"
		}
		a.avail.drop(Laplace.quantity(), CodeNotPositiveDefinite)
		a.diag.add(CodeNotPositiveDefinite, SeverityWarning,
			"No Laplace fit: at the highest mode, %s, %s.", a.pointString(m.X), why)
	default:
		a.avail.drop(Laplace.quantity(), CodeFitFailed)
		a.diag.add(CodeFitFailed, SeverityError, "No Laplace fit: %v.", err)
	}
	return nil
}

// fitReverse fits the reverse-KL Gaussian and its mean-field variant,
// started from the Laplace fit, else the reference's moments. infiniteKL
// reports a density that is zero where the cubature reaches.
func (a *analysis) fitReverse(lap *fit.LaplaceFit) (rev, mfit *fit.VariationalFit, infiniteKL bool, err error) {
	var init *fit.Gaussian
	if lap != nil {
		init = &lap.Gaussian
	} else if a.varianceSettled() {
		if g, err := fit.MomentMatch(a.ref.fitting.Mean, symFromRows(a.ref.fitting.Cov)); err == nil {
			init = &g
		}
	}
	variational := func(stage string, m Method, init fit.Gaussian) (*fit.VariationalFit, error) {
		a.tr.enter(stage)
		// The fraction follows the fit's residual (fit.Settings.Progress);
		// the density's evaluations keep the reports coming between steps.
		a.pw.tick = func(int) { a.tr.beat() }
		run := fit.ReverseKL
		if m == MeanField {
			run = fit.MeanField
		}
		label := m.term()
		vf, err := run(a.ctx, a.pw, init, fit.Settings{Progress: a.tr.at, Helpers: a.helpers()})
		if ctxErr := a.ctx.Err(); ctxErr != nil {
			return nil, ctxErr
		}
		if err == nil || errors.Is(err, fit.ErrNoConvergence) {
			if k, ok := a.superExponential(vf.Gaussian); ok {
				a.avail.drop(m.quantity(), CodeFitFailed)
				a.diag.add(CodeFitFailed, SeverityError,
					"No %s fit: log p falls faster than any exponential along %s (as -(t/lam)^k does along log k), so E_q[log p], and with it KL(q||p), is minus infinity for every Gaussian: there is no reverse-KL optimum on this scale, only the cubature's, which does not see that tail.",
					label, a.axisName(k))
				return nil, nil
			}
		}
		switch {
		case err == nil:
			return &vf, nil
		case errors.Is(err, fit.ErrNoConvergence):
			res := max(vf.GradResidual, vf.PrecisionResidual)
			// A last iterate that is the start, or whose residual says
			// nothing, would mislead as a fit.
			switch {
			case math.IsNaN(res) || math.IsInf(res, 0):
				a.avail.drop(m.quantity(), CodeFitFailed)
				a.diag.add(CodeFitFailed, SeverityError,
					"No %s fit: its iteration stopped after %d steps without converging, its residual not a finite number (the cubature of log p gave no usable gradient or curvature), so its last iterate is not shown.",
					label, vf.Iterations)
				return nil, nil
			case vf.Iterations == 0:
				a.avail.drop(m.quantity(), CodeFitFailed)
				a.diag.add(CodeFitFailed, SeverityError,
					"No %s fit: its iteration took no step from its start and did not converge, so no fit is shown.", label)
				return nil, nil
			case res > runawayResidual:
				a.avail.drop(m.quantity(), CodeFitFailed)
				a.diag.add(CodeFitFailed, SeverityError,
					"No %s fit: the expectation of the gradient of log p under the Gaussian is dominated by its outermost cubature nodes (residual %.2g after %d steps): log p falls faster than any Gaussian's along some direction (as -(t/lam)^k does along log k), where E_q[log p], and so KL(q||p), is infinite for every Gaussian, so there is no reverse-KL optimum on this scale.",
					label, res, vf.Iterations)
				return nil, nil
			}
			if res <= shownResolution && vf.Mean != nil && vf.Cov != nil {
				// Within the comparisons' resolution of its fixed point
				// (the dose groups of a classic bioassay: 6.8e-6 after 25
				// steps, the cubature refined to its node budget): shown
				// as converged, with a note.
				vf.Converged = true
				a.diag.add(CodeNoConvergence, SeverityInfo,
					"The %s fit stopped %.2g of its standard deviations from its fixed point after %d steps (its cubature does not resolve the optimum more finely): below the %.0e the comparisons resolve, so it is shown as converged.",
					label, res, vf.Iterations, shownResolution)
				return &vf, nil
			}
			why := ""
			if errors.Is(err, fit.ErrCubatureBudget) {
				why = fmt.Sprintf(": its cubature, at the %d nodes per axis its budget allows, does not resolve the density on the fit's scale (heavy tails or several modes)", vf.Order)
			}
			a.diag.add(CodeNoConvergence, SeverityWarning,
				"The %s fit did not converge in %d steps (residual %.2g)%s; its last iterate is shown, marked as not converged.",
				label, vf.Iterations, res, why)
			if vf.Mean == nil || vf.Cov == nil {
				a.avail.drop(m.quantity(), CodeNoConvergence)
				return nil, nil
			}
			return &vf, nil
		case errors.Is(err, fit.ErrInfiniteKL):
			infiniteKL = true
			a.avail.drop(m.quantity(), CodeInfiniteKL)
			return nil, nil
		default:
			a.avail.drop(m.quantity(), CodeFitFailed)
			hint := ""
			if errors.Is(err, fit.ErrNonFinite) {
				hint = a.undefinedHint()
			}
			a.diag.add(CodeFitFailed, SeverityError, "No %s fit: %v.%s", label, err, hint)
			return nil, nil
		}
	}
	if init != nil {
		if rev, err = variational(stageReverseKL, ReverseKL, *init); err != nil {
			return nil, nil, false, err
		}
		mfInit := *init
		if rev != nil && rev.Converged {
			mfInit = meanFieldStart(rev)
		}
		if mfit, err = variational(stageMeanField, MeanField, mfInit); err != nil {
			return nil, nil, false, err
		}
	} else {
		a.avail.drop(ReverseKL.quantity(), CodeFitFailed)
		a.avail.drop(MeanField.quantity(), CodeFitFailed)
		a.diag.add(CodeFitFailed, SeverityError,
			"No reverse-KL fits: there is neither a Laplace fit nor an exact covariance to start them from.")
	}
	for _, v := range []struct {
		vf *fit.VariationalFit
		m  Method
	}{{rev, ReverseKL}, {mfit, MeanField}} {
		if v.vf == nil {
			continue
		}
		elbo := v.vf.ELBO
		run := Fit{ELBO: &elbo, Iterations: v.vf.Iterations, Converged: v.vf.Converged,
			Residual: max(v.vf.GradResidual, v.vf.PrecisionResidual)}
		a.fits = append(a.fits, fitted{method: v.m, g: v.vf.Gaussian, prec: v.vf.Precision, run: run})
	}
	return rev, mfit, infiniteKL, nil
}

// meanFieldStart returns the mean-field fit's start from the converged
// full reverse-KL fit: its mean, and variances 1 / Lambda_ii from its
// precision Lambda = -E_q[H], the mean-field optimum where log p is
// quadratic (Bishop, Pattern Recognition and Machine Learning, 2006,
// section 10.1.2), where the full fit's own variances Sigma_ii are wider by
// the correlations. The full fit's Gaussian where a diagonal entry is not
// positive.
func meanFieldStart(rev *fit.VariationalFit) fit.Gaussian {
	d := len(rev.Mean)
	if rev.Precision == nil {
		return rev.Gaussian
	}
	cov := mat.NewSymDense(d, nil)
	for i := 0; i < d; i++ {
		l := rev.Precision.At(i, i)
		if !(l > 0) || math.IsInf(l, 1) {
			return rev.Gaussian
		}
		cov.SetSym(i, i, 1/l)
	}
	return fit.Gaussian{Mean: append([]float64(nil), rev.Mean...), Cov: cov}
}

// fitForward matches the reference's moments, where its variance settles.
func (a *analysis) fitForward() {
	for k := 0; k < a.d; k++ {
		if why := a.avail.whyAt(QuantityAxisErrors, k); why != "" {
			a.avail.drop(ForwardKL.quantity(), why)
			return
		}
	}
	g, err := fit.MomentMatch(a.ref.fitting.Mean, symFromRows(a.ref.fitting.Cov))
	if err != nil {
		a.avail.drop(ForwardKL.quantity(), CodeFitFailed)
		a.diag.add(CodeFitFailed, SeverityError, "No forward-KL fit: %v.", err)
		return
	}
	a.fits = append(a.fits, fitted{method: ForwardKL, g: g, run: Fit{Converged: true}})
}

// boundedKL says when KL(q||p) is infinite for every fit: a support
// bounded on the fitting scale, or a density that is zero where the
// reverse-KL cubature reaches (infiniteKL).
func (a *analysis) boundedKL(infiniteKL bool) {
	var boundedNames []string
	for k, b := range a.bounded {
		if b {
			boundedNames = append(boundedNames, a.names[k])
		}
	}
	if len(boundedNames) > 0 {
		sev := SeverityInfo
		what := "KL(q||p) is infinite for every fit"
		if infiniteKL {
			sev = SeverityWarning
			what = "KL(q||p) is infinite for every fit and the reverse-KL fits do not exist"
		}
		a.diag.add(CodeInfiniteKL, sev,
			"The support of %s is bounded, so every Gaussian puts mass where the density is zero: %s; fit %s on the log or logit scale, where they exist.",
			list(boundedNames), what, list(boundedNames))
	} else if infiniteKL {
		if k := a.signBounded(); k >= 0 {
			a.diag.add(CodeInfiniteKL, SeverityWarning,
				"The density is zero where the reverse-KL cubature reaches, so KL(q||p) is infinite for every Gaussian and the reverse-KL fits do not exist. It is zero for %s below 0: declare its support, as in param %s in [0, inf], and it is fitted on its log scale, where they exist.",
				a.names[k], a.names[k])
			return
		}
		a.diag.add(CodeInfiniteKL, SeverityWarning,
			"The density is zero where the reverse-KL cubature reaches, so KL(q||p) is infinite for every Gaussian and the reverse-KL fits do not exist; if a parameter is bounded, declare its support and fit it on the log or logit scale.")
	}
}

// signBounded returns a parameter declared with no bound that the density
// keeps positive: at the highest mode it is positive and log p finite,
// and with its coordinate negated log p is minus infinity or undefined
// (an sd left as param s in an ld_normal); -1 for none.
func (a *analysis) signBounded() int {
	if len(a.modes.modes) == 0 {
		return -1
	}
	x := slices.Clone(a.modes.modes[0].X)
	if f := a.ev.LogDensity(x); math.IsNaN(f) || math.IsInf(f, 0) {
		return -1
	}
	for k, prm := range a.m.Params {
		if !math.IsInf(prm.Lo, -1) || !math.IsInf(prm.Hi, 1) || !(x[k] > 0) {
			continue
		}
		x[k] = -x[k]
		f := a.ev.LogDensity(x)
		x[k] = -x[k]
		if math.IsNaN(f) || math.IsInf(f, -1) {
			return k
		}
	}
	return -1
}

// varianceSettled reports that the exact variance on the fitting scale
// settles along every axis.
func (a *analysis) varianceSettled() bool {
	for k := 0; k < a.d; k++ {
		if !a.avail.presentAt(QuantityAxisErrors, k) {
			return false
		}
	}
	return true
}

// symFromRows returns the symmetric matrix whose upper triangle is r's.
func symFromRows(r [][]float64) *mat.SymDense {
	d := len(r)
	s := mat.NewSymDense(d, nil)
	for i := 0; i < d; i++ {
		for j := i; j < d; j++ {
			s.SetSym(i, j, r[i][j])
		}
	}
	return s
}

// undefinedHint is the advice after a message about log p undefined (NaN)
// where some parameter has no declared bound: a model undefined beyond
// some value of a parameter needs that parameter's support declared, so
// that every method stays inside it. "" when every parameter has a bound,
// and after the first time (one message gives it).
func (a *analysis) undefinedHint() string {
	if a.undefinedHinted {
		return ""
	}
	var open []string
	for _, prm := range a.m.Params {
		if math.IsInf(prm.Lo, -1) && math.IsInf(prm.Hi, 1) {
			open = append(open, prm.Name)
		}
	}
	if len(open) == 0 {
		return ""
	}
	a.undefinedHinted = true
	return fmt.Sprintf(" Where the model is undefined beyond some value of a parameter (a logarithm or a square root of a negative number), declare its support, as in param %s in [0, inf], so that every method stays inside it.", open[0])
}

// runawayResidual is the residual of a reverse-KL iteration (scaled by the
// start's sds) above which its last iterate is not shown: no slow
// convergence leaves one so large; the gradient's cubature is dominated by
// its outermost nodes, where log p falls faster than a Gaussian's (a
// Weibull model's -(t/lam)^k on the log scale of k stopped at 7e106).
const runawayResidual = 1e8

// shownResolution is the residual (in the fit's standard deviations) of a
// reverse-KL iteration that stopped short of its tolerance below which it
// is shown as converged, with a note: the comparisons resolve 1e-4 (as
// EP's quadrature error is a note below it), and the tables print five
// digits.
const shownResolution = 1e-4
