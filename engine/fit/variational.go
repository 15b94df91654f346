package fit

import (
	"context"
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"bellcheck/engine/target"
)

// Settings tunes the reverse-KL fits. The zero value means the defaults.
type Settings struct {
	// Order is the number of Gauss-Hermite nodes per axis of the tensor
	// cubature; 0 means 20, 12, 8 and 6 nodes for one to four parameters
	// (5 beyond), i.e. 20, 144, 512 and 1296 evaluations of log p with its
	// gradient and Hessian per cubature pass.
	Order int
	// MaxIter is the largest number of accepted steps; 0 means 200.
	MaxIter int
	// Tol is the convergence tolerance on both residuals (see
	// VariationalFit); 0 means 1e-10.
	Tol float64
	// MaxNodes is the budget of the cubature refinement. When the rule does
	// not resolve the density on the scale of q, the order per axis is
	// doubled (at most 200) while Order^d stays within MaxNodes, and the
	// iteration goes on from where it was. That is judged so: the iteration
	// stalls short of Tol (ten accepted steps without the map's residual
	// falling by a tenth, and the ELBO flat to 1e-9) with a residual above
	// Resolution (below, the fit is taken as converged), or it converges
	// but its residuals under the coarser check rule (see
	// VariationalFit.CoarseResidual) exceed Resolution. 0 means 4096 (up to
	// 200 nodes in one dimension, 64 in two, 16 in three, 8 in four); a
	// budget at or below Order^d turns refinement off.
	MaxNodes int
	// Resolution is the largest residual of the converged fit under the
	// coarser check rule that needs no refinement (VariationalFit.
	// CoarseResidual), and of a stalled iteration taken as converged; 0
	// means 1e-6.
	Resolution float64
	// Helpers, when set, are independent copies of the density (Clone)
	// on which each cubature pass of 512 nodes and more evaluates part of
	// its nodes concurrently (one helper is used); the sums, added in a
	// fixed order, are the same with or without them.
	Helpers []target.Density
	// Progress, when set, receives after each accepted step a fraction
	// done that never falls: the way the map's residual has come from the
	// start's towards Tol, on a log scale, or n/(n+40) after n steps where
	// that is larger (see residualProgress). An iteration has no known
	// length, but its residual falls by orders of magnitude.
	Progress func(fraction float64)
}

func (s Settings) withDefaults(d int) Settings {
	if s.Order == 0 {
		s.Order = defaultOrder(d)
	}
	if s.MaxIter == 0 {
		s.MaxIter = 200
	}
	if s.Tol == 0 {
		s.Tol = 1e-10
	}
	if s.MaxNodes == 0 {
		s.MaxNodes = 4096
	}
	if s.Resolution == 0 {
		s.Resolution = 1e-6
	}
	return s
}

// residualProgress returns the reporter of Settings.Progress for an
// iteration whose residual starts at r0: after step n with residual r, the
// larger of log(r0/r) / log(r0/Tol) and n / (n + progressSteps), at most
// 1, reported where it grows (the second keeps it moving where the
// residual lingers: a Lorenz-63 cost's fit held it near 1e-4 for fifty
// steps). It does nothing without a Progress.
func residualProgress(s Settings, r0 float64) func(r float64, n int) {
	if s.Progress == nil {
		return func(float64, int) {}
	}
	span := math.Log(r0 / s.Tol)
	last := 0.0
	return func(r float64, n int) {
		f := float64(n) / float64(n+progressSteps)
		if span > 0 && !math.IsInf(span, 0) && r > 0 {
			f = max(f, math.Log(r0/r)/span)
		}
		if f = min(f, 1); f > last {
			last = f
			s.Progress(f)
		}
	}
}

// progressSteps is the number of steps at which the steps' part of
// residualProgress reaches one half: most fits take 10 to 40.
const progressSteps = 40

// maxDampedTries bounds the damped steps tried, each halving the last,
// after the accelerated step failed: past 2^-12 of the plain step a try
// that succeeds moves the fit by nothing the residuals see, while each
// costs a cubature pass. With 50 a 3-D logistic regression's reverse-KL
// fit took 165 passes (at up to 16^3 nodes; 1.6 s of a 1.8 s analysis),
// most of them tries that all failed where the iteration had stalled at
// its cubature's rounding; with 12 the fit took 0.23 to 0.26 s, the same
// to 1e-15 (TestReverseKLLogisticCost). Every reference case's and gallery
// example's fits stayed the same to 1e-13.
const maxDampedTries = 12

// Stall watch (see Settings.MaxNodes).
const (
	tinyDamping = 1.0 / 512
	stallSteps  = 10
	stallELBO   = 1e-9
	maxOrder    = 200
)

// trialRejected reports an error of a trial step's cubature that rejects
// the step rather than the fit: log p -Inf (the trial's q reaches where the
// density is zero) or not finite at a node, or its derivatives' sums
// overflowing (a density whose log falls faster than any Gaussian's, as
// -(t/lam)^k with k on the log scale, sent the mean-field iteration's
// accelerated steps to 1e104). The current iterate was evaluated without
// either; a step that meets them is halved like one that lowers the ELBO.
func trialRejected(err error) bool {
	return errors.Is(err, ErrNonFinite) || errors.Is(err, ErrInfiniteKL)
}

// refinedOrder returns the doubled order per axis, capped at maxOrder, if
// the rule stays within maxNodes nodes and grows; else 0.
func refinedOrder(d, order, maxNodes int) int {
	next := min(2*order, maxOrder)
	if next <= order {
		return 0
	}
	size := 1
	for i := 0; i < d; i++ {
		size *= next
		if size > maxNodes {
			return 0
		}
	}
	return next
}

// VariationalFit is a reverse-KL Gaussian fit.
type VariationalFit struct {
	Gaussian
	// ELBO is E_q[log p] + entropy(q), a lower bound on log Z (up to the
	// cubature error).
	ELBO float64
	// Precision is -E_q[Hessian log p] at the last iterate, the full matrix
	// also for the mean-field fit (whose inverse variances equal its
	// diagonal at the optimum).
	Precision *mat.SymDense
	// Iterations counts the accepted steps.
	Iterations int
	// Converged reports that both residuals met Settings.Tol under the final
	// rule, or that the iteration stalled with both within
	// Settings.Resolution (see CoarseResidual for how well that rule
	// resolves the optimum).
	Converged bool
	// GradResidual is |Lᵀ E_q[grad log p]| with Σ = L Lᵀ: the mean's
	// stationarity residual in units of the fit's standard deviations.
	GradResidual float64
	// PrecisionResidual is the covariance's stationarity residual
	// |I + Lᵀ E_q[H] L|_F, i.e. Σ⁻¹ + E_q[H] relative to Σ⁻¹; for the
	// mean-field fit, the Euclidean norm of 1 + σ_i² E_q[H_ii].
	PrecisionResidual float64
	// ELBOTrace holds the ELBO of the initial and of every accepted iterate.
	// No entry falls below the highest before it by more than
	// 1e-10 (1 + |ELBO|), the tie level at which a lower residual decides
	// (see ReverseKL). After a refinement of the cubature it holds the same
	// iterate's ELBO under the finer rule, which may differ either way.
	ELBOTrace []float64
	// Evaluations counts the cubature passes (each Order^d evaluations of
	// log p with its derivatives), rejected trial steps included, and the
	// check of CubatureErr.
	Evaluations int
	// CubatureErr estimates the cubature's error in the ELBO: the change in
	// the ELBO of the final q under a coarser rule, with a quarter fewer
	// nodes per axis (at least two fewer). It is an estimate, not a bound;
	// on the tests' targets it exceeded the true error. NaN when the order
	// is under 3 or the coarser rule meets a non-finite log p.
	CubatureErr float64
	// CoarseResidual is the larger of the two residuals of the final q
	// under that coarser rule: how well the cubature resolves the optimum
	// (the residuals above are met under the rule used, whatever its
	// error). NaN as for CubatureErr.
	CoarseResidual float64
	// Order is the number of nodes per axis of the final cubature rule, and
	// Refinements the number of times the rule was refined (see
	// Settings.MaxNodes).
	Order, Refinements int
}

// ReverseKL minimises KL(q||p) over Gaussians q = N(mu, L Lᵀ) with full
// covariance, starting from init, and returns the fit with the ELBO.
//
// The expectations E_q[log p], E_q[grad log p] and E_q[Hessian log p] come
// from a tensor Gauss-Hermite cubature. At the optimum E_q[grad] = 0 and
// Σ⁻¹ = -E_q[H] (Opper and Archambeau, Neural Computation 21, 2009). The
// iteration is the fixed-point map of those conditions,
//
//	Λ ← -E_q[H],   mu ← mu + (-E_q[H])⁻¹ E_q[grad]
//
// (a Newton step for the mean; the plain map is exact in one step for a
// Gaussian target, but it may oscillate or diverge otherwise). Each step is
// safeguarded and accepted only where the ELBO rises:
//
//   - first an Anderson-accelerated step (Walker and Ni, SIAM J. Numer.
//     Anal. 49, 2011; memory 4) built from the last iterates of the map,
//     in coordinates whitened by the start's covariance (so that the
//     step's least squares weigh every direction alike, however correlated
//     the parameters). The iterates are kept when a damped step is taken
//     instead: each accepted iterate is a sample of the map's residual
//     wherever it came from. (Forgetting them after every failed proposal
//     left the acceleration with one difference at a time on a chaotic
//     cost's strongly correlated fit: 191 cubature passes against 72.);
//   - failing that, the damped step Λ' = (1-a) Λ + a (-E_q[H]),
//     mu' = mu + b Λ'⁻¹ E_q[grad], with a and b halved from 1 (a from twice
//     the last accepted a) until Λ' is positive definite and the ELBO
//     rises. Where -E_q[H] is not positive definite (a density that is not
//     log-concave on the scale of q) the halving keeps Λ' a positive
//     definite blend dominated by the current Λ, and the mean moves by Λ'⁻¹
//     instead of the Newton step: a small natural-gradient step.
//
// Near the optimum the ELBO changes by about the square of the residual,
// which falls below rounding; and under cubature the fixed point differs
// from the maximiser of the cubature ELBO by the cubature's error in Stein's
// identity E[grad zᵀ] = E[H] L, so steps towards the fixed point may lower
// the cubature ELBO by that error squared. So once a step changes the ELBO
// by less than 1e-10 (1 + |ELBO|) (measured from the highest ELBO so far,
// so that the ELBO cannot drift down), it is accepted where it lowers the
// residual of the map instead.
//
// When the iteration stalls short of the tolerance, the cubature does not
// resolve the density on the scale of q (so the fixed point and the maximum
// of the cubature ELBO disagree); when it converges, the residuals under a
// coarser rule show whether the rule resolves the optimum. In either case the
// rule is refined within Settings.MaxNodes and the iteration goes on.
//
// Errors: ErrInfiniteKL when log p is -Inf at a cubature node (the support is
// bounded, so KL(q||p) is infinite for every Gaussian; fit the parameter on
// the log or logit scale); ErrNonFinite when log p is NaN or +Inf or its
// derivatives are not finite; ErrNoConvergence, with the last iterate
// (Converged false), when MaxIter steps do not meet Tol or the iteration
// stalls with the node budget spent; ctx.Err() when ctx is cancelled (checked before every cubature
// pass).
func ReverseKL(ctx context.Context, p target.Density, init Gaussian, s Settings) (VariationalFit, error) {
	return variational(ctx, p, init, s, false)
}

// MeanField does the same as ReverseKL over Gaussians with a diagonal
// covariance: at the optimum E_q[grad] = 0 and 1/σ_i² = -E_q[H_ii]. The
// precision map acts on the diagonal only; the mean moves by the Newton step
// (-E_q[H])⁻¹ E_q[grad] where -E_q[H] is positive definite, else by
// σ_i² E_q[grad_i]. Only the diagonal of init.Cov is used.
func MeanField(ctx context.Context, p target.Density, init Gaussian, s Settings) (VariationalFit, error) {
	return variational(ctx, p, init, s, true)
}

// tieLevel is the relative change of the ELBO below which a lower residual,
// not the ELBO, decides whether a step is accepted (see ReverseKL).
const tieLevel = 1e-10

// An iteration stalled with the node budget spent whose residual lies in
// (relaxAbove, relaxBelow] may let the ELBO fall by the cubature's error,
// once (see variational). The 4-D funnel's fit stalled at 1.2e-4 with
// 6 nodes per axis, steps that would have lowered the residual twentyfold
// refused for lowering the ELBO by 1.9e-7 against a cubature error of
// 1.6e-3; relaxed, it converges to 1e-10, and a robust regression with
// unknown degrees of freedom, stalled at 7.5e-3 before, converges too.
// Below relaxAbove (the comparisons' resolution, where the engine shows a
// stall as converged: the README's Lorenz-63 fit stalled at 7.3e-6 with
// 4,096 nodes, where the tries after relaxing all failed and cost 11 s)
// and above relaxBelow (a kinked density's stall at residuals over 1,
// which gives no fit) a stall is left as it was. Where the rule can still
// be refined, refining is the remedy, as before.
const (
	relaxAbove = 1e-4
	relaxBelow = 1e-2
)

// andersonMemory is the number of past steps Anderson acceleration uses.
const andersonMemory = 4

func variational(ctx context.Context, p target.Density, init Gaussian, s Settings, diag bool) (VariationalFit, error) {
	name := "reverse KL"
	if diag {
		name = "mean field"
	}
	d := p.Dim()
	if d < 1 {
		return VariationalFit{}, fmt.Errorf("%w: %s: density has %d dimensions", ErrBadInput, name, d)
	}
	if init.Dim() != d {
		return VariationalFit{}, fmt.Errorf("%w: %s: initial Gaussian has %d dimensions, the density %d", ErrBadInput, name, init.Dim(), d)
	}
	if s.Order < 0 || s.MaxIter < 0 || s.Tol < 0 || math.IsNaN(s.Tol) || s.MaxNodes < 0 || s.Resolution < 0 || math.IsNaN(s.Resolution) {
		return VariationalFit{}, fmt.Errorf("%w: %s: settings %+v", ErrBadInput, name, s)
	}
	s = s.withDefaults(d)
	r, err := newRule(d, s.Order)
	if err != nil {
		return VariationalFit{}, fmt.Errorf("%s: %w", name, err)
	}
	v := newSolver(p, r, diag, s.Helpers)

	cur, trial := v.newState(), v.newState()
	if err := check(init, cur.l); err != nil {
		return VariationalFit{}, fmt.Errorf("%s: initial Gaussian: %w", name, err)
	}
	copy(cur.mu, init.Mean)
	sliceFromSym(cur.cov, init.Cov)
	if diag {
		for i := 0; i < d; i++ {
			for j := 0; j < d; j++ {
				if i != j {
					cur.cov[i*d+j] = 0
				}
			}
		}
		cholesky(cur.l, cur.cov, d)
	}
	copy(v.l0, cur.l)
	cholInverse(cur.l, cur.prec, v.col, d)
	cur.logDetCov = cholLogDet(cur.l, d)
	if err := ctx.Err(); err != nil {
		return VariationalFit{}, err
	}
	if err := v.evaluate(cur); err != nil {
		return VariationalFit{}, fmt.Errorf("%s: %w", name, err)
	}

	trace := []float64{cur.elbo}
	report := residualProgress(s, v.residualNorm(cur))
	refinements := 0
	a := 0.5
	iters := 0
	converged := false
	var stopErr error
	// Stall watch: the best map residual so far, the steps since it last
	// fell by a tenth, and the ELBO then.
	best, since, elboThen := norm(cur.f), 0, cur.elbo
	// topELBO is the highest ELBO under the current rule: ties are judged
	// against it, so the ELBO cannot drift down step by step.
	topELBO := cur.elbo
	// The check of the final iterate under the coarser rule.
	cubErr, coarseRes := math.NaN(), math.NaN()
	// refine switches to the next finer rule within the budget, re-evaluates
	// cur under it and restarts the acceleration; it reports false when the
	// budget is spent.
	// relaxed is the ELBO's fall allowed, once, to an iteration stalled
	// near the fixed point with the budget spent (see relaxAbove); 0
	// until then.
	relaxed := 0.0
	refine := func() (bool, error) {
		next := refinedOrder(d, s.Order, s.MaxNodes)
		if next == 0 {
			return false, nil
		}
		fine, err := newRule(d, next)
		if err != nil {
			return false, err
		}
		v.r, s.Order = fine, next
		if err := v.evaluate(cur); err != nil {
			return false, err
		}
		v.aa.clear()
		a = 0.5
		refinements++
		trace = append(trace, cur.elbo)
		best, since, elboThen, topELBO = norm(cur.f), 0, cur.elbo, cur.elbo
		return true, nil
	}
	// floored: the iteration stalled with both residuals within
	// Resolution; the fit is taken as converged under the same check of
	// the rule's resolution.
	floored := false
	for {
		gr, pr := v.residuals(cur)
		if (gr <= s.Tol && pr <= s.Tol) || floored {
			floored = false
			// Converged under this rule. Does the rule resolve the optimum?
			if err := ctx.Err(); err != nil {
				return VariationalFit{}, err
			}
			cubErr, coarseRes = v.check(cur, trial, s.Order)
			if !(coarseRes > s.Resolution) {
				converged = true
				break
			}
			if err := ctx.Err(); err != nil {
				return VariationalFit{}, err
			}
			ok, err := refine()
			if err != nil {
				return VariationalFit{}, fmt.Errorf("%s: %w", name, err)
			}
			if !ok {
				converged = true
				break
			}
			continue
		}
		if iters >= s.MaxIter {
			stopErr = fmt.Errorf("%w: %s: %d steps left the residuals at %.3g (mean) and %.3g (precision), above %.3g", ErrNoConvergence, name, iters, gr, pr, s.Tol)
			break
		}
		tie := tieLevel * (1 + math.Abs(cur.elbo))
		merit := norm(cur.f)
		floor := topELBO - max(tie, relaxed)
		better := func(t *viState) bool {
			return t.elbo > cur.elbo+tie || (t.elbo >= floor && norm(t.f) < merit)
		}
		v.aa.push(cur.theta, cur.f)
		accepted := false
		if v.aa.propose(v.thetaTry, cur.theta, cur.f) && v.unpack(v.thetaTry, trial) {
			if err := ctx.Err(); err != nil {
				return VariationalFit{}, err
			}
			if err := v.evaluate(trial); err != nil {
				if !trialRejected(err) {
					return VariationalFit{}, fmt.Errorf("%s: %w", name, err)
				}
			} else {
				accepted = better(trial)
			}
		}
		if !accepted {
			// The damped steps; the acceleration keeps its iterates.
			a = min(1, 2*a)
			b := 1.0
			for tries := 0; tries < maxDampedTries && !accepted; tries++ {
				if err := ctx.Err(); err != nil {
					return VariationalFit{}, err
				}
				if v.damped(cur, trial, a, b) {
					if err := v.evaluate(trial); err != nil {
						if !trialRejected(err) {
							return VariationalFit{}, fmt.Errorf("%s: %w", name, err)
						}
					} else {
						accepted = better(trial)
					}
				}
				if !accepted {
					a /= 2
					b /= 2
				}
			}
		}
		if accepted {
			cur, trial = trial, cur
			trace = append(trace, cur.elbo)
			topELBO = max(topELBO, cur.elbo)
			iters++
			report(v.residualNorm(cur), iters)
			if m := norm(cur.f); m < 0.9*best {
				best, since, elboThen = m, 0, cur.elbo
			} else {
				since++
			}
		}
		// A step taken only at a sliver of the map's (the damping halved
		// below tinyDamping) moves the fit by nothing the residuals see:
		// the iteration has stalled as surely as when no step is taken.
		crawled := accepted && a < tinyDamping
		stalled := !accepted || crawled || (since >= stallSteps && cur.elbo-elboThen <= stallELBO*(1+math.Abs(cur.elbo)))
		if !stalled {
			continue
		}
		// The iteration has stopped short of the fixed point. Within
		// Resolution of it (the residual a converged fit may keep under
		// the coarser check rule) it is taken as converged, and the
		// converged branch checks the rule's resolution as for any fit:
		// there the steps change the ELBO by its rounding, and a finer
		// rule does not move the residual (Neal's funnel in 2-D, written
		// with the model language's ld_normal, stalled at 3.4e-9 while a
		// hand-written funnel reached 2e-11 from the same start, and
		// three refinements to 48 nodes a side took 60 ms and left it
		// there; the near-separated dose-response stalled at 9.5e-7 with
		// 48 nodes a side, after converging to 1e-13 with 24).
		if gr, pr := v.residuals(cur); max(gr, pr) <= s.Resolution {
			floored = true
			continue
		}
		// Further away, under an
		// accurate cubature the fixed point is the ELBO's maximum, so this
		// means the rule does not resolve the density on the scale of q:
		// refine it and go on from here, within the node budget.
		if err := ctx.Err(); err != nil {
			return VariationalFit{}, err
		}
		ok, err := refine()
		if err != nil {
			return VariationalFit{}, fmt.Errorf("%s: %w", name, err)
		}
		if !ok {
			// The budget is spent. Near the fixed point the rule's fixed
			// point and its ELBO's maximum part by the cubature's error,
			// so steps towards the fixed point may lower the cubature ELBO
			// by up to that error, which says nothing about the fit. Once
			// the ELBO may fall that far below its highest (the coarser
			// rule's change in the ELBO, as in VariationalFit.CubatureErr)
			// where a step lowers the residual, and the iteration goes on
			// from here (see relaxAbove).
			if gr, pr := v.residuals(cur); relaxed == 0 && max(gr, pr) > relaxAbove && max(gr, pr) <= relaxBelow {
				if diff, _ := v.check(cur, trial, s.Order); diff > 0 {
					relaxed = diff
					since, best, elboThen = 0, norm(cur.f), cur.elbo
					v.aa.clear()
					a = 0.5
					continue
				}
			}
			gr, pr := v.residuals(cur)
			stopErr = fmt.Errorf("%w (%w): %s: the iteration stalled after %d steps with residuals %.3g (mean) and %.3g (precision) at %d nodes per axis, the most the budget of %d nodes allows: the cubature does not resolve the density on the scale of the fit (heavy tails or several modes?); the last iterate is returned", ErrNoConvergence, ErrCubatureBudget, name, iters, gr, pr, s.Order, s.MaxNodes)
			break
		}
	}
	if math.IsNaN(coarseRes) {
		if err := ctx.Err(); err != nil {
			return VariationalFit{}, err
		}
		cubErr, coarseRes = v.check(cur, trial, s.Order)
	}
	gr, pr := v.residuals(cur)
	negEH := make([]float64, d*d)
	for i := range negEH {
		negEH[i] = -cur.eh[i]
	}
	fit := VariationalFit{
		Gaussian:          Gaussian{Mean: append([]float64(nil), cur.mu...), Cov: symFromSlice(cur.cov, d)},
		ELBO:              cur.elbo,
		Precision:         symFromSlice(negEH, d),
		Iterations:        iters,
		Converged:         converged,
		GradResidual:      gr,
		PrecisionResidual: pr,
		ELBOTrace:         trace,
		Evaluations:       v.evals,
		CubatureErr:       cubErr,
		CoarseResidual:    coarseRes,
		Order:             s.Order,
		Refinements:       refinements,
	}
	return fit, stopErr
}
