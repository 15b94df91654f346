package transform

import (
	"errors"
	"fmt"
	"math"

	"bellcheck/engine/special"
)

// Scale names the scale on which a parameter is fitted: the map from a
// fitting-scale coordinate z to the original x. It is the one spelling of a
// scale from the options to the page; its JSON form is its name.
type Scale string

// The scales. The empty Scale means Identity in a Map; in the options of
// an analysis it means the parameter's default scale (engine.ScaleOf).
const (
	// Identity: x = z.
	Identity Scale = "identity"
	// Log: x = lo + e^z, for a support [lo, inf].
	Log Scale = "log"
	// Logit: x = lo + (hi - lo) / (1 + e^-z), for a support [lo, hi].
	Logit Scale = "logit"
)

// Scales lists the scales in the order a chooser offers them.
var Scales = []Scale{Identity, Log, Logit}

// String returns the scale's name ("identity" for the empty Scale).
func (s Scale) String() string {
	if s == "" {
		return string(Identity)
	}
	return string(s)
}

// IsIdentity reports Identity or the empty Scale, which means it.
func (s Scale) IsIdentity() bool { return s == "" || s == Identity }

// Unconstrained returns the scale on which a support [lo, hi] becomes the
// whole line: log for [lo, inf] with a finite lo, logit for a finite
// [lo, hi], identity otherwise (an unbounded support, or one bounded
// above only).
func Unconstrained(lo, hi float64) Scale {
	finiteLo := !math.IsInf(lo, 0) && !math.IsNaN(lo)
	finiteHi := !math.IsInf(hi, 0) && !math.IsNaN(hi)
	switch {
	case finiteLo && finiteHi && lo < hi:
		return Logit
	case finiteLo && math.IsInf(hi, 1):
		return Log
	}
	return Identity
}

// ErrSupport is returned when a scale does not fit a parameter's support:
// the log scale needs a finite lower bound and an infinite upper one, the
// logit scale two finite bounds.
var ErrSupport = errors.New("transform: scale does not fit the support")

// Check reports whether the scale suits a support [lo, hi]: every support
// suits the identity, the log scale needs a finite lo and hi = +inf, the
// logit scale a finite lo < hi. An unknown name is an error too.
func (s Scale) Check(lo, hi float64) error {
	switch s {
	case "", Identity:
		return nil
	case Log:
		if math.IsInf(lo, 0) || math.IsNaN(lo) || !math.IsInf(hi, 1) {
			return fmt.Errorf("%w: the log scale needs a support [lo, inf] with a finite lo, not [%g, %g]", ErrSupport, lo, hi)
		}
	case Logit:
		if math.IsInf(lo, 0) || math.IsInf(hi, 0) || math.IsNaN(lo) || math.IsNaN(hi) || !(lo < hi) {
			return fmt.Errorf("%w: the logit scale needs a finite support [lo, hi] with lo < hi, not [%g, %g]", ErrSupport, lo, hi)
		}
	default:
		return fmt.Errorf("%w: unknown scale %q (want identity, log or logit)", ErrSupport, string(s))
	}
	return nil
}

// Map is a parameter's scale with its support: the map from the fitting
// scale to the original one.
type Map struct {
	Scale  Scale
	Lo, Hi float64 // the support on the original scale
}

// Check reports whether the map's scale suits its support (see Scale.Check).
func (m Map) Check() error { return m.Scale.Check(m.Lo, m.Hi) }

// ToOriginal returns x(z).
func (m Map) ToOriginal(z float64) float64 {
	switch m.Scale {
	case Log:
		return m.Lo + special.Exp(z)
	case Logit:
		// Measure from the nearer bound so that x keeps its precision.
		if z <= 0 {
			return m.Lo + (m.Hi-m.Lo)*special.Logistic(z)
		}
		return m.Hi - (m.Hi-m.Lo)*special.Logistic(-z)
	}
	return z
}

// FromOriginal returns z(x), the inverse of ToOriginal; outside the support
// it returns NaN, at a bound -Inf or +Inf.
func (m Map) FromOriginal(x float64) float64 {
	switch m.Scale {
	case Log:
		if x < m.Lo {
			return math.NaN()
		}
		return math.Log(x - m.Lo)
	case Logit:
		if x < m.Lo || x > m.Hi {
			return math.NaN()
		}
		return math.Log(x-m.Lo) - math.Log(m.Hi-x)
	}
	return x
}

// Derivs returns x(z), dx/dz, d2x/dz2, the log-Jacobian log(dx/dz) and its
// first and second derivatives in z.
func (m Map) Derivs(z float64) (x, dx, d2x, logJ, dlogJ, d2logJ float64) {
	switch m.Scale {
	case Log:
		e := special.Exp(z)
		return m.Lo + e, e, e, z, 1, 0
	case Logit:
		w := m.Hi - m.Lo
		s := special.Logistic(z)
		sm := special.Logistic(-z) // 1 - s without cancellation
		x = m.ToOriginal(z)
		dx = w * s * sm
		d2x = dx * (sm - s)
		logJ = math.Log(w) - special.Log1pExp(-z) - special.Log1pExp(z)
		return x, dx, d2x, logJ, sm - s, -2 * s * sm
	}
	return z, 1, 0, 0, 0, 0
}

// LogJacobian returns log(dx/dz) at z.
func (m Map) LogJacobian(z float64) float64 {
	switch m.Scale {
	case Log:
		return z
	case Logit:
		return math.Log(m.Hi-m.Lo) - special.Log1pExp(-z) - special.Log1pExp(z)
	}
	return 0
}

// Reach returns the fitting-scale coordinates [zlo, zhi] within which x(z)
// stays clear of the support's bounds in floating point: beyond them
// lo + e^z (or its logit counterpart) rounds onto a bound, where the model
// would be evaluated at the bound itself (a density with a pole there
// would read +inf though it is finite on the fitting scale). The identity
// has no such limits (-inf, +inf). The margin kept is about 2^-50 of the
// bound's size, or 1e-290 where the bound is 0.
func (m Map) Reach() (zlo, zhi float64) {
	gap := func(b float64) float64 { return max(math.Abs(b)*0x1p-50, 1e-290) }
	switch m.Scale {
	case Log:
		return math.Log(gap(m.Lo)), math.Log(1e290)
	case Logit:
		w := m.Hi - m.Lo
		return math.Log(gap(m.Lo) / w), -math.Log(gap(m.Hi) / w)
	}
	return math.Inf(-1), math.Inf(1)
}
