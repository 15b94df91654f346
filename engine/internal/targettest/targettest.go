// Package targettest adapts plain functions to target.Density, for the
// tests of the engine's packages.
package targettest

import "bellcheck/engine/target"

// Func is a target.Density made of functions. LogP gives log p; Derivs,
// when set, gives log p with its gradient and Hessian (and serves as LogP
// where LogP is nil). Count, when non-nil, counts the evaluations of log p
// (a block counts one per point); clones share it.
type Func struct {
	D      int
	LogP   func(x []float64) float64
	Derivs func(x, grad, hess []float64) float64
	Count  *int

	x, grad, hess []float64 // scratch
}

var _ target.Density = (*Func)(nil)

// Dim returns D.
func (f *Func) Dim() int { return f.D }

// LogDensity returns log p(x).
func (f *Func) LogDensity(x []float64) float64 {
	if f.Count != nil {
		*f.Count++
	}
	if f.LogP != nil {
		return f.LogP(x)
	}
	if len(f.grad) != f.D {
		f.grad, f.hess = make([]float64, f.D), make([]float64, f.D*f.D)
	}
	return f.Derivs(x, f.grad, f.hess)
}

// LogDensityDerivs returns log p(x) and writes its gradient and Hessian;
// it panics when the density has no Derivs (a test that needs derivatives
// must give them).
func (f *Func) LogDensityDerivs(x, grad, hess []float64) float64 {
	if f.Derivs == nil {
		panic("targettest: derivatives asked of a density without Derivs")
	}
	if f.Count != nil {
		*f.Count++
	}
	return f.Derivs(x, grad, hess)
}

// LogDensityBlock evaluates log p point by point.
func (f *Func) LogDensityBlock(cols [][]float64, out []float64) {
	if len(f.x) != f.D {
		f.x = make([]float64, f.D)
	}
	for i := range out {
		for k := range f.x {
			f.x[k] = cols[k][i]
		}
		out[i] = f.LogDensity(f.x)
	}
}

// Clone returns a copy with its own scratch space.
func (f *Func) Clone() target.Density {
	return &Func{D: f.D, LogP: f.LogP, Derivs: f.Derivs, Count: f.Count}
}
