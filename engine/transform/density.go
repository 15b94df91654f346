package transform

import (
	"fmt"
	"math"

	"bellcheck/engine/target"
)

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
// columns' points. It is the integrators' entry (the grid's and the nested
// rule's), and where x(z) has rounded onto a bound (roundsToBound) it
// gives NaN, a point that cannot be evaluated, so that they do not take a
// flat tail for a falling one; LogDensity and LogDensityDerivs, the fits'
// and searches' entries, give the model's value at the rounded point
// there (-inf where the Jacobian has vanished: the far tail of a fit's
// nodes).
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
		if m.Scale.IsIdentity() {
			copy(xs, zs)
			continue
		}
		for i, z := range zs {
			xs[i] = m.ToOriginal(z)
			if m.roundsToBound(z, xs[i]) {
				lj[i] = math.NaN()
				continue
			}
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

// roundsToBound reports whether x, the image of a finite fitting-scale
// coordinate z, has come so close to a finite bound b of the support that
// floating point no longer holds their distance: x rounded onto b, or
// below 1e-290 from a bound at 0 (where x turns subnormal and loses its
// digits). The model there is not the density at z: a pole at the bound
// would read +inf where the density on the fitting scale is finite, or the
// lost digits would make a flat tail look as if it fell, so the point
// cannot be evaluated and its log-density is NaN.
func (m Map) roundsToBound(z, x float64) bool {
	if m.Scale.IsIdentity() || math.IsInf(z, 0) {
		return false
	}
	near := func(b float64) bool {
		return x == b && !math.IsInf(b, 0) || b == 0 && math.Abs(x) < 1e-290
	}
	return near(m.Lo) || near(m.Hi)
}
