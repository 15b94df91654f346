package quadrature

import (
	"errors"

	"bellcheck/engine/transform"
)

// Settings of Integrate. The zero value means the defaults.
type Settings struct {
	// Step is the finest step h of the trapezoid rule in t; 0 means 0.25.
	// The rules of steps 2h and 4h share its nodes.
	Step float64
	// Width is the node map's half-width w in conditional standard
	// deviations (u = c + w sd sinh t); 0 means 1.5.
	Width float64
	// Tol ends a walk along an axis where the density's share of a node
	// has fallen below Tol times the walk's largest; 0 means 1e-10 (at
	// 1e-12 the reference cases' rules took 2 to 48 % more points, 48 in
	// 4-D, for log Z errors that differed by 6e-12 at most: where the
	// targets bind, the discretisation's error is the larger).
	Tol float64
	// MomentTol is the same for the second powers; 0 means 1e-8 (the
	// geometric remainder added at a walk's end carries the rest of the
	// tail). The fourth powers end at max(MomentTol, 1e-2): see
	// fourthPowerTol.
	MomentTol float64
	// MaxT bounds |t|; 0 means 16 (|u| up to about 4e6 conditional sds).
	MaxT float64
	// MaxPoints bounds the density evaluations; 0 means 4 << 20.
	MaxPoints int
	// Target is the error estimate of log Z below which the rule is not
	// refined; 0 means 1e-9, 1e-8, 5e-6 and 5e-6 for 1 to 4 parameters
	// (the estimate is 20 to 60 times pessimistic on smooth densities).
	// While the estimate is above it, the step is halved, as long as the
	// finer rule is expected to take at most RefineBudget points (0
	// means 1 << 20).
	Target       float64
	RefineBudget int
	// Maps give per parameter the original scale x(z) of the moments on
	// the original scale; nil means the identity.
	Maps []transform.Map
	// Order lists the parameters from the outermost axis of the nested
	// rule to the innermost. Nil means: run a pilot rule at step 2h, order
	// the axes from its moments and centre the rule at its mean (see
	// Integrate).
	Order []int
	// NewtonSteps bounds the damped Newton steps that recentre the inner
	// axes at each outer node; 0 means 20. The rule integrates correctly
	// from any centre near the mass, only with more nodes from a poor one.
	NewtonSteps int
	// Progress, when set, receives the fraction done (0 to 1).
	Progress func(fraction float64)
	// Tick, when set, is called every tickLines lines of nodes, in the
	// slices of marginals and plots too: work of no known share, for a
	// caller that must pause often (the page yields to the browser there).
	Tick func()
	// keepMaps has each axis's node map keep the shape (sinh or linear on
	// each side) chosen on its first line, rescaled on the others: the
	// slices of marginals and plots, where the probes were a third of the
	// evaluations. On the gallery's examples every result stayed the same
	// to the last bit; on the 3-D funnel and the short Lorenz benchmarks
	// quantiles moved by 1e-13 relative.
	keepMaps bool
	// lineCondition conditions a 2-D rule's inner axis from three values
	// of log p (conditionLine), as 3-D and 4-D rules do, where a Hessian
	// costs far more than three values (a pair marginal's, PairNodes).
	lineCondition bool
	// lines counts the lines of nodes of a rule and of every slice of its
	// result, shared by their settings' copies (a slice may have a single
	// line), for Tick.
	lines *int
}

func (s Settings) withDefaults() Settings {
	if !(s.Step > 0) {
		s.Step = 0.25
	}
	if !(s.Width > 0) {
		s.Width = 1.5
	}
	if !(s.Tol > 0) {
		s.Tol = 1e-10
	}
	if !(s.MomentTol > 0) {
		s.MomentTol = 1e-8
	}
	if !(s.MaxT > 0) {
		s.MaxT = 16
	}
	if s.MaxPoints <= 0 {
		s.MaxPoints = 4 << 20
	}
	if s.RefineBudget <= 0 {
		s.RefineBudget = 1 << 20
	}
	if s.lines == nil {
		s.lines = new(int)
	}
	return s
}

func (s Settings) target(d int) float64 {
	if s.Target > 0 {
		return s.Target
	}
	return [...]float64{1e-9, 1e-9, 1e-8, 5e-6, 5e-6}[min(d, 4)]
}

// Start is where the rule is centred: the mode on the unconstrained scale
// and the curvature there, as the negative Hessian of log p (row-major) or,
// when that is nil, a pilot covariance.
type Start struct {
	Mode       []float64
	NegHessian []float64
	Cov        []float64
	// NoMode reports that the density has no mode on the unconstrained
	// scale (it grows without bound down a funnel's neck; Mode and Cov
	// describe the mass another way): the slices of marginals and pairs
	// then keep their outer axis at the conditional centre instead of
	// moving it by Newton steps, which run down the neck.
	NoMode bool
}

// Errors of Integrate.
var (
	// ErrBadStart means a start of the wrong size, not finite, or with a
	// curvature that is not positive definite.
	ErrBadStart = errors.New("quadrature: bad start")
	// ErrNoMass means the density is zero or undefined at every node.
	ErrNoMass = errors.New("quadrature: the density is zero or undefined at every node")
	// ErrTooLarge means the rule needed more than MaxPoints evaluations.
	ErrTooLarge = errors.New("quadrature: too many points")
)

// Tail decay: a component whose share per unit of t falls more slowly than
// e^(-minRate t) at the end of a walk is taken to have an infinite integral.
// An algebraic tail |u|^-a of the density on the unconstrained scale gives
// a share e^(-(a-1)t) in t, a power u^k multiplies it by e^(kt): in the
// usual families (Student t with a whole or half number of dof, inverse
// gamma) the rates of finite integrals are multiples of 1/2, so 0.25
// separates them from the infinite ones (rate 0 or less).
const minRate = 0.25
