package fit

import (
	"math"

	"gonum.org/v1/gonum/mat"

	"bellcheck/engine/internal/dense"
)

// Small dense routines on row-major d×d slices, for the few-parameter
// matrices of this package. They write into caller-allocated slices and do
// not allocate, so the iterations can call them freely.

// pivotTol is the relative size below which a Cholesky pivot counts as zero:
// a matrix whose pivot falls below pivotTol times its diagonal entry is
// treated as not positive definite (its condition number exceeds ~1e13).
const pivotTol = 1e-13

// cholesky factorises a = C Cᵀ (dense.Cholesky with pivotTol).
func cholesky(c, a []float64, d int) bool { return dense.Cholesky(c, a, d, pivotTol) }

// forwardSolve overwrites b with C⁻¹ b.
func forwardSolve(c, b []float64, d int) { dense.ForwardSolve(c, b, d) }

// backSolve overwrites b with C⁻ᵀ b.
func backSolve(c, b []float64, d int) { dense.BackSolve(c, b, d) }

// cholSolve overwrites b with a⁻¹ b where a = C Cᵀ.
func cholSolve(c, b []float64, d int) { dense.CholSolve(c, b, d) }

// cholInverse writes a⁻¹ into inv where a = C Cᵀ; col is scratch.
func cholInverse(c, inv, col []float64, d int) { dense.CholInverse(c, inv, col, d) }

// cholLogDet returns log det a for a = C Cᵀ.
func cholLogDet(c []float64, d int) float64 { return dense.CholLogDet(c, d) }

// symmetrize replaces a by (a + aᵀ)/2.
func symmetrize(a []float64, d int) { dense.Symmetrize(a, d) }

// symFromSlice returns a new SymDense holding the full row-major a.
func symFromSlice(a []float64, d int) *mat.SymDense {
	s := mat.NewSymDense(d, nil)
	for i := 0; i < d; i++ {
		for j := i; j < d; j++ {
			s.SetSym(i, j, 0.5*(a[i*d+j]+a[j*d+i]))
		}
	}
	return s
}

// sliceFromSym copies the symmetric s into the row-major a.
func sliceFromSym(a []float64, s mat.Symmetric) {
	d := s.SymmetricDim()
	for i := 0; i < d; i++ {
		for j := 0; j < d; j++ {
			a[i*d+j] = s.At(i, j)
		}
	}
}

// allFinite reports whether every element of v is finite.
func allFinite(v []float64) bool {
	for _, x := range v {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return false
		}
	}
	return true
}
