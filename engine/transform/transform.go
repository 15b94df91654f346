package transform

import (
	"errors"
	"fmt"
	"math"

	"bellcheck/engine/target"
)

// Kind is the map from a fitting-scale coordinate z to the original x.
type Kind int

const (
	// Identity: x = z.
	Identity Kind = iota
	// Log: x = lo + e^z, for a support [lo, inf].
	Log
	// Logit: x = lo + (hi - lo) / (1 + e^-z), for a support [lo, hi].
	Logit
)

// String returns "identity", "log" or "logit".
func (k Kind) String() string {
	switch k {
	case Log:
		return "log"
	case Logit:
		return "logit"
	}
	return "identity"
}

// ErrSupport is returned when a scale does not fit a parameter's support:
// the log scale needs a finite lower bound and an infinite upper one, the
// logit scale two finite bounds.
var ErrSupport = errors.New("transform: scale does not fit the support")

// Map is the per-parameter map from the fitting scale to the original one.
type Map struct {
	Kind   Kind
	Lo, Hi float64 // the support on the original scale
}

// Check reports whether the map's kind suits its support.
func (m Map) Check() error {
	switch m.Kind {
	case Identity:
		return nil
	case Log:
		if math.IsInf(m.Lo, 0) || math.IsNaN(m.Lo) || !math.IsInf(m.Hi, 1) {
			return fmt.Errorf("%w: the log scale needs a support [lo, inf] with a finite lo, not [%g, %g]", ErrSupport, m.Lo, m.Hi)
		}
	case Logit:
		if math.IsInf(m.Lo, 0) || math.IsInf(m.Hi, 0) || math.IsNaN(m.Lo) || math.IsNaN(m.Hi) || !(m.Lo < m.Hi) {
			return fmt.Errorf("%w: the logit scale needs a finite support [lo, hi] with lo < hi, not [%g, %g]", ErrSupport, m.Lo, m.Hi)
		}
	default:
		return fmt.Errorf("%w: unknown scale %d", ErrSupport, int(m.Kind))
	}
	return nil
}

// ToOriginal returns x(z).
func (m Map) ToOriginal(z float64) float64 {
	switch m.Kind {
	case Log:
		return m.Lo + math.Exp(z)
	case Logit:
		// Measure from the nearer bound so that x keeps its precision.
		if z <= 0 {
			return m.Lo + (m.Hi-m.Lo)*logistic(z)
		}
		return m.Hi - (m.Hi-m.Lo)*logistic(-z)
	}
	return z
}

// FromOriginal returns z(x), the inverse of ToOriginal; outside the support
// it returns NaN, at a bound -Inf or +Inf.
func (m Map) FromOriginal(x float64) float64 {
	switch m.Kind {
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
	switch m.Kind {
	case Log:
		e := math.Exp(z)
		return m.Lo + e, e, e, z, 1, 0
	case Logit:
		w := m.Hi - m.Lo
		s := logistic(z)
		sm := logistic(-z) // 1 - s without cancellation
		x = m.ToOriginal(z)
		dx = w * s * sm
		d2x = dx * (sm - s)
		logJ = math.Log(w) - log1pexp(-z) - log1pexp(z)
		return x, dx, d2x, logJ, sm - s, -2 * s * sm
	}
	return z, 1, 0, 0, 0, 0
}

// LogJacobian returns log(dx/dz) at z.
func (m Map) LogJacobian(z float64) float64 {
	switch m.Kind {
	case Log:
		return z
	case Logit:
		return math.Log(m.Hi-m.Lo) - log1pexp(-z) - log1pexp(z)
	}
	return 0
}

func logistic(z float64) float64 {
	if z >= 0 {
		return 1 / (1 + math.Exp(-z))
	}
	e := math.Exp(z)
	return e / (1 + e)
}

// log1pexp returns log(1 + e^z) without overflow.
func log1pexp(z float64) float64 {
	if z > 35 {
		return z
	}
	if z < -35 {
		return math.Exp(z)
	}
	return math.Log1p(math.Exp(z))
}

// Density is a target.Density on the fitting scale: log p(x(z)) + sum_k
// log(dx_k/dz_k).
type Density struct {
	inner target.Density
	maps  []Map
	// scratch
	x, g, h []float64
	cols    [][]float64
	xc      [][]float64
	logJ    []float64
}

var _ target.Density = (*Density)(nil)

// Wrap returns p on the fitting scale given by maps (one per parameter).
// When every map is the identity it still wraps, at a small cost.
func Wrap(p target.Density, maps []Map) (*Density, error) {
	d := p.Dim()
	if len(maps) != d {
		return nil, fmt.Errorf("transform: %d maps for a density of %d parameters", len(maps), d)
	}
	for k, m := range maps {
		if err := m.Check(); err != nil {
			return nil, fmt.Errorf("parameter %d: %w", k+1, err)
		}
	}
	return &Density{
		inner: p,
		maps:  append([]Map(nil), maps...),
		x:     make([]float64, d),
		g:     make([]float64, d),
		h:     make([]float64, d*d),
		cols:  make([][]float64, d),
		xc:    make([][]float64, d),
	}, nil
}

// Maps returns the per-parameter maps (the caller must not modify them).
func (t *Density) Maps() []Map { return t.maps }

// Dim returns the number of parameters.
func (t *Density) Dim() int { return t.inner.Dim() }

// Clone returns an independent copy.
func (t *Density) Clone() target.Density {
	c, _ := Wrap(t.inner.Clone(), t.maps)
	return c
}

// LogDensity returns the log-density on the fitting scale at z.
func (t *Density) LogDensity(z []float64) float64 {
	lj := 0.0
	for k, m := range t.maps {
		t.x[k] = m.ToOriginal(z[k])
		lj += m.LogJacobian(z[k])
	}
	if math.IsInf(lj, -1) {
		return math.Inf(-1)
	}
	return t.inner.LogDensity(t.x) + lj
}

// LogDensityDerivs returns the log-density on the fitting scale with its
// gradient and Hessian (row-major) in z, by the chain rule.
func (t *Density) LogDensityDerivs(z, grad, hess []float64) float64 {
	d := len(t.maps)
	var dx, d2x, dlj, d2lj [4]float64
	lj := 0.0
	for k, m := range t.maps {
		var l float64
		t.x[k], dx[k], d2x[k], l, dlj[k], d2lj[k] = m.Derivs(z[k])
		lj += l
	}
	if math.IsInf(lj, -1) {
		for i := range grad {
			grad[i] = 0
		}
		for i := range hess {
			hess[i] = 0
		}
		return math.Inf(-1)
	}
	f := t.inner.LogDensityDerivs(t.x, t.g, t.h)
	for k := 0; k < d; k++ {
		grad[k] = t.g[k]*dx[k] + dlj[k]
		for l := 0; l < d; l++ {
			v := t.h[k*d+l] * dx[k] * dx[l]
			if k == l {
				v += t.g[k]*d2x[k] + d2lj[k]
			}
			hess[k*d+l] = v
		}
	}
	return f + lj
}

// LogDensityBlock evaluates the log-density on the fitting scale at the
// columns' points.
func (t *Density) LogDensityBlock(cols [][]float64, out []float64) {
	n := len(out)
	if cap(t.logJ) < n {
		t.logJ = make([]float64, n)
		for k := range t.cols {
			t.cols[k] = make([]float64, n)
		}
	}
	lj := t.logJ[:n]
	for i := range lj {
		lj[i] = 0
	}
	for k, m := range t.maps {
		xs := t.cols[k][:n]
		zs := cols[k]
		if m.Kind == Identity {
			copy(xs, zs)
			continue
		}
		for i, z := range zs {
			xs[i] = m.ToOriginal(z)
			lj[i] += m.LogJacobian(z)
		}
	}
	for k := range t.xc {
		t.xc[k] = t.cols[k][:n]
	}
	t.inner.LogDensityBlock(t.xc, out)
	for i := range out {
		if math.IsInf(lj[i], -1) {
			out[i] = math.Inf(-1)
		} else {
			out[i] += lj[i]
		}
	}
}
