package fit

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// LaplaceFit is the mode-curvature Gaussian at a mode, with the Laplace
// evidence estimate.
type LaplaceFit struct {
	Gaussian
	// LogZ is log p(m) + (d/2) log 2pi - (1/2) log det(-H).
	LogZ float64
	// Precision is -H, the negative Hessian of log p at the mode.
	Precision *mat.SymDense
}

// Laplace returns the mode-curvature fit at m: mean m.X, covariance (-H)⁻¹
// with H the Hessian of log p there, and the evidence estimate
// log p(m) + (d/2) log 2pi - (1/2) log det(-H). It returns an error wrapping
// ErrOnBound when the mode is on a bound, and ErrNotPositiveDefinite when
// -H is not positive definite or the curvature is numerically zero
// (m.PositiveDefinite false, e.g. exp(-x^4/4) at 0).
func Laplace(m Mode) (LaplaceFit, error) {
	d := len(m.X)
	if d == 0 || m.Hess == nil || m.Hess.SymmetricDim() != d {
		return LaplaceFit{}, fmt.Errorf("%w: Laplace: mode without a matching Hessian", ErrBadInput)
	}
	if !allFinite(m.X) || math.IsNaN(m.LogDensity) || math.IsInf(m.LogDensity, 0) {
		return LaplaceFit{}, fmt.Errorf("%w: Laplace: mode %v with log p %v", ErrNonFinite, m.X, m.LogDensity)
	}
	if m.OnBound {
		return LaplaceFit{}, fmt.Errorf("%w: Laplace: the mode %v lies on the bound of the support, where the curvature does not describe the density", ErrOnBound, m.X)
	}
	prec := make([]float64, d*d)
	for i := 0; i < d; i++ {
		for j := 0; j < d; j++ {
			prec[i*d+j] = -m.Hess.At(i, j)
		}
	}
	if !allFinite(prec) {
		return LaplaceFit{}, fmt.Errorf("%w: Laplace: Hessian at the mode %v", ErrNonFinite, m.X)
	}
	c := make([]float64, d*d)
	if m.Flat {
		return LaplaceFit{}, fmt.Errorf("%w: Laplace: the curvature at the mode %v is numerically zero (log p is flatter than quadratic there)", ErrNotPositiveDefinite, m.X)
	}
	if !m.PositiveDefinite || !cholesky(c, prec, d) {
		return LaplaceFit{}, fmt.Errorf("%w: Laplace: -Hessian at the mode %v is not positive definite (the point is not a strict maximum, or the curvature vanishes)", ErrNotPositiveDefinite, m.X)
	}
	cov := make([]float64, d*d)
	cholInverse(c, cov, make([]float64, d), d)
	if !allFinite(cov) {
		return LaplaceFit{}, fmt.Errorf("%w: Laplace: covariance at the mode %v", ErrNonFinite, m.X)
	}
	logZ := m.LogDensity + 0.5*float64(d)*math.Log(2*math.Pi) - 0.5*cholLogDet(c, d)
	return LaplaceFit{
		Gaussian:  Gaussian{Mean: append([]float64(nil), m.X...), Cov: symFromSlice(cov, d)},
		LogZ:      logZ,
		Precision: symFromSlice(prec, d),
	}, nil
}
