// Package target defines the interface between a compiled model and the
// numerical methods: an unnormalised log-density of a few parameters.
package target

// Density is an unnormalised log-density log p(x) of Dim() parameters.
// Outside the support it returns -Inf; where it is undefined, NaN.
// Implementations keep scratch space: a Density is not safe for concurrent
// use; Clone gives an independent copy.
type Density interface {
	// Dim returns the number of parameters (1 to 4).
	Dim() int
	// LogDensity returns log p(x); len(x) == Dim().
	LogDensity(x []float64) float64
	// LogDensityDerivs returns log p(x) and writes its gradient into grad
	// (len Dim()) and its Hessian into hess (row-major, len Dim()*Dim()).
	LogDensityDerivs(x, grad, hess []float64) float64
	// LogDensityBlock evaluates log p at n points given by columns:
	// cols[k][i] is coordinate k of point i, and out[i] receives log p there.
	// len(cols) == Dim(), and every column and out have the same length n.
	LogDensityBlock(cols [][]float64, out []float64)
	// Clone returns an independent copy that may be used concurrently.
	Clone() Density
}
