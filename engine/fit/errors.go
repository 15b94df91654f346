package fit

import "errors"

// Sentinel errors. Functions wrap them with a message saying where and what;
// test for them with errors.Is.
var (
	// ErrNotPositiveDefinite: a precision or covariance matrix (for the
	// Laplace fit, -Hessian at the mode) is not positive definite.
	ErrNotPositiveDefinite = errors.New("fit: matrix not positive definite")
	// ErrOnBound: the mode lies on the bound of the box, so the curvature
	// there does not describe the density.
	ErrOnBound = errors.New("fit: mode on a bound")
	// ErrNoConvergence: an iteration stopped before its tolerance was met.
	ErrNoConvergence = errors.New("fit: no convergence")
	// ErrCubatureBudget, beside ErrNoConvergence: a variational iteration
	// stalled with its cubature refined as far as its node budget allows,
	// which does not resolve the density on the scale of the fit.
	ErrCubatureBudget = errors.New("fit: the cubature's node budget is spent")
	// ErrInfiniteKL: log p is -Inf where a Gaussian has mass, so KL(q||p) is
	// infinite for every Gaussian q.
	ErrInfiniteKL = errors.New("fit: KL(q||p) is infinite")
	// ErrNonFinite: a value that must be finite is NaN or infinite.
	ErrNonFinite = errors.New("fit: non-finite value")
	// ErrNoFiniteStart: log p is -Inf at every start of the mode search.
	ErrNoFiniteStart = errors.New("fit: log p is -Inf at every start")
	// ErrBadInput: arguments of the wrong size or out of range.
	ErrBadInput = errors.New("fit: bad input")
)
