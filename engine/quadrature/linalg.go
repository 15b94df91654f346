package quadrature

import (
	"bellcheck/engine/internal/dense"
)

// Small dense linear algebra on row-major d×d slices (d <= 4), without
// allocation.

// cholesky writes the lower factor c of the symmetric positive definite a
// (a = c c^T) and reports whether a is positive definite.
func cholesky(c, a []float64, d int) bool { return dense.Cholesky(c, a, d, 0) }

// cholSolve solves (c c^T) x = b in place of b.
func cholSolve(c, b []float64, d int) { dense.CholSolve(c, b, d) }

// cholInverse writes (c c^T)^-1 into inv, using col (len d) as scratch.
func cholInverse(c, inv, col []float64, d int) { dense.CholInverse(c, inv, col, d) }

// cholLogDet returns log det of c c^T.
func cholLogDet(c []float64, d int) float64 { return dense.CholLogDet(c, d) }
