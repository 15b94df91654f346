package ep

import (
	"context"
	"errors"
	"fmt"
)

// Factors is a log-density written as a sum of factors,
// log p(x) = Const() + sum_i Log_i(x); eval.Factors implements it.
type Factors interface {
	// Dim returns the number of parameters.
	Dim() int
	// Len returns the number of factors.
	Len() int
	// Const returns the constant part of the log-density.
	Const() float64
	// Quadratic reports whether factor i is a polynomial of degree at most
	// 2 (a Gaussian term, kept exact).
	Quadratic(i int) bool
	// Direction returns a when factor i depends on x only through a^T x,
	// else nil.
	Direction(i int) []float64
	// LogBlock writes factor i at len(out) points into out; point p is
	// xs[p*Dim() : (p+1)*Dim()].
	LogBlock(i int, xs, out []float64)
	// LogDerivs returns factor i at x and writes its gradient and Hessian
	// (row-major).
	LogDerivs(i int, x, grad, hess []float64) float64
}

// Errors of Run.
var (
	// ErrBadInput: the factors or the settings are unusable.
	ErrBadInput = errors.New("ep: bad input")
	// ErrSingleFactor: one factor to approximate and no Gaussian part to
	// form its cavity: EP would be moment matching of the whole density.
	ErrSingleFactor = errors.New("ep: a single factor that cannot be split")
	// ErrImproper: the Gaussian part and the starting sites do not make a
	// proper Gaussian.
	ErrImproper = errors.New("ep: the starting approximation is not a proper Gaussian")
)

// Settings configure Run. The zero value means the defaults given.
type Settings struct {
	// MaxSweeps bounds the passes over the sites (default 100).
	MaxSweeps int
	// Tol: converged when a sweep changes the approximation's means by less
	// than Tol of its standard deviations, its standard deviations by less
	// than Tol relatively and its correlations by less than Tol (default
	// 1e-9).
	Tol float64
	// Resolution: a run that stops at MaxSweeps or stalls (see Stalled)
	// with every site updated and its last sweep's change below Resolution
	// counts as converged (default 1e-6: a millionth of a standard
	// deviation, far below what any comparison resolves).
	Resolution float64
	// Damping is the first step of every site update, in (0, 1]: the new
	// natural parameters are (1-Damping) old + Damping proposed (default 1,
	// no damping). It is halved, down to MinDamping, whenever a sweep
	// changes the approximation more than the sweep before it.
	Damping float64
	// MinDamping is the smallest step (default 1/64).
	MinDamping float64
	// Nodes1D is the Gauss-Hermite order of one-dimensional tilted moments
	// (default 64).
	Nodes1D int
	// NodesPerAxis is the order per axis of the tensor Gauss-Hermite
	// cubature for factors of several parameters (default 24, 12, 8, 6 for
	// 1 to 4 parameters).
	NodesPerAxis int
	// MaxCubatureNodes bounds the nodes of a full site's cubature when
	// the orders are refined (default 1<<16).
	MaxCubatureNodes int
	// QuadTol: where the tilted moments' estimated quadrature error (see
	// Result.QuadratureError) exceeds QuadTol at the end, the orders are
	// doubled and the sweeps go on (default 1e-9).
	QuadTol float64
	// Start is the point where the Gaussian part is expanded and, when the
	// Gaussian part alone is not a proper Gaussian or Start lies more than
	// six of its standard deviations from its mean, where the sites start
	// as the factors' second-order expansions (the mode is a good start).
	// Zero when nil.
	Start []float64
	// SitesForAll gives every factor a site, quadratic ones too (tests use
	// it to check that EP recovers a Gaussian exactly).
	SitesForAll bool
	// Progress, when not nil, is called after every sweep; a non-nil error
	// stops the run with that error.
	Progress func(sweep int, change float64) error
	// Tick, when not nil, is called after every site update (a caller
	// that must yield often, as a page does, can do it there); a non-nil
	// error stops the run with that error.
	Tick func() error
}

func (s *Settings) withDefaults(d int) Settings {
	var r Settings
	if s != nil {
		r = *s
	}
	if r.MaxSweeps <= 0 {
		r.MaxSweeps = 100
	}
	if !(r.Tol > 0) {
		r.Tol = 1e-9
	}
	if !(r.Resolution > 0) {
		r.Resolution = max(1e-6, r.Tol)
	}
	if !(r.Damping > 0 && r.Damping <= 1) {
		r.Damping = 1
	}
	if !(r.MinDamping > 0 && r.MinDamping <= r.Damping) {
		r.MinDamping = min(1.0/64, r.Damping)
	}
	if r.Nodes1D <= 0 {
		r.Nodes1D = 64
	}
	if r.MaxCubatureNodes <= 0 {
		r.MaxCubatureNodes = 1 << 16
	}
	if !(r.QuadTol > 0) {
		r.QuadTol = 1e-9
	}
	if r.NodesPerAxis <= 0 {
		r.NodesPerAxis = [...]int{24, 24, 12, 8, 6}[min(d, 4)]
	}
	return r
}

// Status says why a run stopped.
type Status int

const (
	// Converged: a sweep changed the approximation by less than Tol.
	Converged Status = iota
	// MaxSweeps: the sweep budget ran out first.
	MaxSweeps
	// NoSites: every factor is Gaussian; the approximation is exact.
	NoSites
	// Stalled: the least change per sweep had not fallen for
	// stallSweeps sweeps (an oscillation): the run stopped unconverged.
	Stalled
)

// String says the status in words.
func (s Status) String() string {
	switch s {
	case Converged:
		return "converged"
	case MaxSweeps:
		return "sweep limit reached before convergence"
	case NoSites:
		return "every factor is Gaussian: exact"
	case Stalled:
		return "stopped: the sweeps no longer brought it closer to convergence"
	}
	return fmt.Sprintf("status %d", int(s))
}

// Site is a factor's Gaussian approximation at the end, in natural
// parameters: exp(-Tau s^2/2 + Nu s) with s = Direction^T x for a factor of
// one linear combination, exp(-x^T Prec x/2 + Lin^T x) otherwise.
type Site struct {
	Factor    int
	Direction []float64
	Tau, Nu   float64
	Prec, Lin []float64
	// LogZ is the log of the tilted distribution's normaliser in the last
	// pass (the factor's expectation under the normalised cavity); NaN
	// where the cavity is improper.
	LogZ float64
}

// Result is the outcome of Run.
type Result struct {
	// Mean and Cov (row-major) are the approximation's moments.
	Mean, Cov []float64
	// LogZ is the EP estimate of the log-normaliser of exp(log p); NaN
	// where a tilted distribution could not be integrated in the last pass.
	LogZ float64
	// Sweeps is the number of passes over the sites.
	Sweeps    int
	Converged bool
	Status    Status
	// Change is the last sweep's change (see Settings.Tol).
	Change float64
	// Damping is the step at the end.
	Damping float64
	// Exact is the number of factors kept exact (quadratic), Sites the
	// number approximated by sites, OneDim those among them with
	// one-dimensional tilted moments.
	Exact, OneDim int
	Sites         []Site
	// Skipped counts site updates not made: the cavity or the updated
	// approximation was not a proper Gaussian even at the smallest step,
	// or the tilted distribution had no mass. SkippedLast counts those of
	// the last sweep: a site is then not at its fixed point.
	Skipped, SkippedLast int
	// NegativeSites counts sites with a negative precision at the end
	// (allowed as long as every cavity is proper; common where a factor
	// is not log-concave).
	NegativeSites int
	// ImproperCavities counts the sites whose cavity is not a proper
	// Gaussian at the end. A one-dimensional site may have one where its
	// tilted distribution is proper (the factor decays); a full site may
	// not (it is then not updated).
	ImproperCavities int
	// UnsettledTilted counts the sites whose tilted distribution could not
	// be integrated in the last pass (an improper cavity and a factor that
	// does not decay): LogZ is then NaN.
	UnsettledTilted int
	// MomentGap is the largest disagreement, in the last pass, between a
	// factor's tilted moments and the approximation's (mean difference in
	// standard deviations, relative variance difference): near 0 at a
	// fixed point.
	MomentGap float64
	// QuadratureError estimates the tilted moments' quadrature error: the
	// largest change of the last pass's tilted moments with a rule of about
	// 1.5 times the order.
	QuadratureError float64
	// Refinements counts the doublings of the quadrature orders.
	Refinements int
	// Nodes1D and NodesPerAxis are the quadrature orders at the end.
	Nodes1D, NodesPerAxis int
	// Undefined counts the quadrature nodes in the last pass where a factor
	// was NaN (taken as zero density).
	Undefined int
}

// Run approximates exp(log p) by EP.
//
// Updates are sequential: the sites are visited in order, and each update
// changes the approximation before the next site's cavity is formed (Minka
// 2001, section 3.2). A factor of one linear combination a^T x has a
// rank-one site and one-dimensional tilted moments (Gauss-Hermite in the
// cavity's standardised a^T x); any other factor has a full site and a
// tensor Gauss-Hermite cubature in the cavity's whitened coordinates.
//
// A full site's update whose cavity is not a proper Gaussian is skipped, as
// is a rank-one site's whose tilted distribution cannot be integrated (an
// improper cavity and a factor that does not decay); an update that
// would make the approximation improper is retried with half the step,
// down to MinDamping, and skipped after that. Negative site precisions are
// kept when every cavity and the approximation stay proper (Gelman et al.
// 2020, JMLR 21, "Expectation propagation as a way of life", discuss
// skipping, damping and clipping; this is damping, then skipping).
//
// With a single factor to approximate, one update reaches the fixed point:
// the approximation is the moment-matching Gaussian of the whole density
// (the forward-KL optimum). Without a proper Gaussian part to serve as that
// factor's cavity Run returns ErrSingleFactor.
func Run(ctx context.Context, fs Factors, settings *Settings) (*Result, error) {
	if fs == nil || fs.Dim() < 1 || fs.Dim() > 4 {
		return nil, fmt.Errorf("%w: need 1 to 4 parameters", ErrBadInput)
	}
	d := fs.Dim()
	s := settings.withDefaults(d)
	if s.Start != nil && len(s.Start) != d {
		return nil, fmt.Errorf("%w: start has %d coordinates, want %d", ErrBadInput, len(s.Start), d)
	}
	r, err := newRunner(fs, s)
	if err != nil {
		return nil, err
	}
	return r.run(ctx)
}
