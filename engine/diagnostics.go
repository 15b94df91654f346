package engine

import (
	"cmp"
	"fmt"
	"slices"
	"strings"
)

// Diagnostic codes. Each is stable (scripts may test for it) and comes with
// one plain sentence and a severity:
//
//	code                   severity        when
//	several_modes          warning / info  more than one mode; warning when a second mode holds 1 % of the mass or more
//	edge_mass              warning         more than 1e-6 of the mass in the outermost layer of a free face of the
//	                                       box or of a side the user set; or more than 1e-10 at a face the box
//	                                       search could not widen further without losing the density's centre
//	                                       (heavy tails, a funnel); or the box was narrowed afterwards because the
//	                                       grid could not resolve the centre (about 1e-8 left beyond each side)
//	improper               error           the box search widened a face as far as it may and more than 1e-4 of the
//	                                       mass stays in its outer layer, or the mass beyond the box seems to
//	                                       exceed that inside, or the density grows like 1/distance or faster
//	                                       towards a bound of its support: the density is improper (not
//	                                       integrable) or far too heavy-tailed for a grid; log Z, and the mean,
//	                                       covariance and quantiles of the axes concerned, are absent
//	box_not_settled        warning         the box search stopped before the box settled
//	not_positive_definite  warning         no Laplace fit: -Hessian at the highest mode is not positive definite, or
//	                                       the curvature there is numerically zero (e.g. exp(-x^4/4) at 0)
//	mode_on_bound          warning         no Laplace fit: the highest mode lies on a bound of the support
//	no_mode                error           the mode search found no mode (no Laplace fit)
//	no_convergence         warning / info  a reverse-KL or the EP fit stopped before its tolerance; its last iterate
//	                                       is shown and marked (Converged false); a note where a reverse-KL fit
//	                                       stopped within 1e-4 of its sds of its fixed point (shown as converged)
//	ep_single_factor       info            no EP fit: the density is one factor that cannot be split, so EP would
//	                                       be the forward-KL fit
//	ep_improper_site       warning         EP skipped site updates in its last sweep (an improper cavity or
//	                                       approximation) or a cavity is improper at the end (its log Z is absent)
//	ep_quadrature          warning / info  EP's tilted moments carry a quadrature error over 1e-6 with the finest rule it tried;
//	                                       warning over 1e-4
//	infinite_kl            warning / info  a parameter's support is bounded on its fitting scale, so every Gaussian
//	                                       has KL(q||p) = inf; warning when the reverse-KL fits do not exist for
//	                                       that reason; points to the log or logit scale
//	fit_failed             error           a fit failed for another reason, given in the sentence
//	heavy_tails            warning         a marginal's mean or variance still moves as the box widens (a relative
//	                                       change over 1e-3 when the outer quarter towards a free face is dropped),
//	                                       or its fourth moment does not settle (the excess kurtosis is then absent)
//	no_variance            warning         the variance does not settle (as for a Cauchy density): the forward-KL
//	                                       fit and the exact covariance are absent
//	no_mean                warning         the mean does not settle either: the exact mean is absent
//	non_finite             warning         log p is NaN or +inf at some grid points, which are left out
//	skewed                 warning         a marginal's skewness exceeds 0.5 in size on the fitting scale
//	                                       (a rule of thumb, common practice)
//	tails_kurtosis         warning         a marginal's excess kurtosis exceeds 1 in size on the fitting scale
//	                                       (a rule of thumb, common practice)
//	grid_error             warning         the reference's error estimate (the grid's, or the nested rule's where it
//	                                       stands) is large: log Z off by more than 1e-3, a mean
//	                                       by more than 1e-3 sd or a variance by more than 1 %; or
//	                                       a marginal too peaked for a walk of its own has its quantiles
//	                                       from the rule's walks, off by up to 2e-3 of probability
//	fit_off_grid           info            a fit has more than 1e-6 of its mass outside the box (its KL(q||p) then
//	                                       comes from a cubature in its own coordinates) or is too narrow for the
//	                                       grid (its KL(q||p) and Hellinger distance do, and its coverage is absent)
//	mode_not_polished      info            the mode search on the original scale failed: the exact mode is absent
//	infinite_at_bound      warning         the density grows without bound towards a bound of the support (as
//	                                       x^(a-1), a < 1): the grid's error estimates are scaled up by
//	                                       1/(2^a - 1) for the order h^a of its error there; points to the log
//	                                       or logit scale
//	lost_precision         warning         log p is so large in magnitude at its highest that doubles there lie
//	                                       more than 1e-6 apart: rounding noise in the shape; negative
//	                                       divergences are absent, and beyond 1e-3 all divergences and
//	                                       Hellinger distances are
//	overflow               warning         an exact moment or quantile overflows double precision (on the original
//	                                       scale of a log-scaled parameter whose box reaches z > 709), or a
//	                                       skewness and kurtosis were lost to rounding (below Pearson's bound
//	                                       kurtosis >= skewness^2 - 2): it is absent
//	unresolved             error           the grid cannot integrate the density: log p is +inf at a node (an
//	                                       overflow or a singularity), or one layer of nodes across an axis
//	                                       holds more than half the mass (a spike, or a peak or a funnel's
//	                                       neck narrower than the spacing); log Z, the exact moments and
//	                                       quantiles, and the fits' comparisons are absent
//	starts_disagree        warning         (with the nested rule) starts spread over a wide region found a mode
//	                                       higher than the mode search's best: the search's best point is not
//	                                       the global optimum; the exact results cover both
//	local_optima           info            (a cost model) the grid's lesser peaks, polished, reach local minima
//	                                       that hold no posterior mass, or the mode search reached such a minimum
//	                                       beside the deepest: their number, the deepest of them and how much
//	                                       higher its J is (such minima are not counted in several_modes)
//	unused_param           error           a declared parameter that no expression of the model uses: the
//	                                       density is flat along it (improper); names an implicit parameter
//	                                       that looks like a misspelling of it
//	implicit_lookalike     warning         a parameter used without a param line whose name looks like a
//	                                       misspelling of a declared parameter or a definition
//	ode_steps              warning         with twice its substeps an ode block changes log p at the modes (and two
//	                                       sds either side of the highest) by amounts that differ by more than 0.1:
//	                                       the posterior follows the Runge-Kutta step, not the equations
//	rule_missed_mass       info            the nested rule's log Z fell short of a grid that resolves the density
//	                                       (a mode far narrower than the others, stepped over): the exact results
//	                                       are the grid's
const (
	CodeSeveralModes        = "several_modes"
	CodeEdgeMass            = "edge_mass"
	CodeImproper            = "improper"
	CodeBoxNotSettled       = "box_not_settled"
	CodeNotPositiveDefinite = "not_positive_definite"
	CodeModeOnBound         = "mode_on_bound"
	CodeNoMode              = "no_mode"
	CodeNoConvergence       = "no_convergence"
	CodeInfiniteKL          = "infinite_kl"
	CodeFitFailed           = "fit_failed"
	CodeHeavyTails          = "heavy_tails"
	CodeNoVariance          = "no_variance"
	CodeNoMean              = "no_mean"
	CodeNonFinite           = "non_finite"
	CodeSkewed              = "skewed"
	CodeTailsKurtosis       = "tails_kurtosis"
	CodeGridError           = "grid_error"
	CodeFitOffGrid          = "fit_off_grid"
	CodeModeNotPolished     = "mode_not_polished"
	CodeUnresolved          = "unresolved"
	CodeInfiniteAtBound     = "infinite_at_bound"
	CodeOverflow            = "overflow"
	CodeLostPrecision       = "lost_precision"
	CodeStartsDisagree      = "starts_disagree"
	CodeLocalOptima         = "local_optima"
	CodeRuleMissedMass      = "rule_missed_mass"
	CodeUnusedParam         = "unused_param"
	CodeImplicitLookalike   = "implicit_lookalike"
	CodeODESteps            = "ode_steps"
)

// Thresholds of the diagnostics.
const (
	edgeMassWarn     = 1e-6
	improperEdgeMass = 1e-4 // at a capped face
	tailShareWarn    = 1e-3 // heavy tails
	tailShareAbsent  = 5e-2 // no variance
	absShareAbsent   = 1e-2 // no mean
	skewWarn         = 0.5
	kurtWarn         = 1.0
	modeMassWarn     = 0.01
	logZErrWarn      = 1e-3
	meanErrWarn      = 1e-3 // in sd
	varErrWarn       = 1e-2 // relative
)

// diagnostics collects the diagnostics of one analysis.
type diagnostics struct {
	list []Diagnostic
	seen map[string]bool
}

func (d *diagnostics) add(code, severity, format string, args ...any) {
	msg := fmt.Sprintf(format, args...)
	key := code + "\x00" + msg
	if d.seen == nil {
		d.seen = map[string]bool{}
	}
	if d.seen[key] {
		return
	}
	d.seen[key] = true
	d.list = append(d.list, Diagnostic{Code: code, Severity: severity, Message: msg})
}

// sorted returns the diagnostics, errors first, then warnings, then
// information, each in the order found.
// drop removes the diagnostics of code (a verdict another stage
// superseded).
func (d *diagnostics) drop(code string) {
	out := d.list[:0]
	for _, g := range d.list {
		if g.Code != code {
			out = append(out, g)
		}
	}
	d.list = out
	for k := range d.seen {
		if len(k) > len(code) && k[:len(code)+1] == code+"\x00" {
			delete(d.seen, k)
		}
	}
}

func (d *diagnostics) sorted() []Diagnostic {
	rank := map[string]int{SeverityError: 0, SeverityWarning: 1, SeverityInfo: 2}
	out := append([]Diagnostic{}, d.list...) // never nil: none is [] in the JSON
	slices.SortStableFunc(out, func(x, y Diagnostic) int {
		if c := cmp.Compare(rank[x.Severity], rank[y.Severity]); c != 0 {
			return c
		}
		return cmp.Compare(rootRank(x.Code), rootRank(y.Code))
	})
	return out
}

// rootRank puts first, within a severity, the diagnostics that explain
// the others: an improper density or an unused parameter (a decay rate
// with no prior, whose likelihood tends to a constant as it grows, read
// first "no mode", "unresolved" and two failed fits, and only then why),
// and an ode block whose posterior follows its step (a cooling curve's
// spurious mode at the step's stability limit came with starts_disagree
// and several_modes before it); then the density's several modes, which
// explain a fit that failed or disagrees (the note is written when the
// result is, after the fits' own).
func rootRank(code string) int {
	switch code {
	case CodeUnusedParam, CodeImproper, CodeODESteps:
		return 0
	case CodeSeveralModes:
		return 1
	}
	return 2
}

// percent formats a share of the mass for a sentence.
func percent(x float64) string {
	switch {
	case x >= 0.995:
		return fmt.Sprintf("%.1f %%", 100*x)
	case x >= 0.01:
		return fmt.Sprintf("%.0f %%", 100*x)
	case x >= 1e-4:
		return fmt.Sprintf("%.2f %%", 100*x)
	}
	return fmt.Sprintf("%.1g of the mass", x)
}

// share formats a small share of the mass: "12 %", "0.37 %", "3e-09".
func share(x float64) string {
	if x >= 1e-4 {
		return percent(x)
	}
	return fmt.Sprintf("%.1g", x)
}

// list joins names as "a", "a and b", "a, b and c".
func list(names []string) string {
	switch len(names) {
	case 0:
		return ""
	case 1:
		return names[0]
	}
	return strings.Join(names[:len(names)-1], ", ") + " and " + names[len(names)-1]
}
