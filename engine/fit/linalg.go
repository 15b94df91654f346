package fit

import (
	"math"

	"gonum.org/v1/gonum/mat"
)

// Small dense routines on row-major d×d slices, for the few-parameter
// matrices of this package. They write into caller-allocated slices and do
// not allocate, so the iterations can call them freely.

// pivotTol is the relative size below which a Cholesky pivot counts as zero:
// a matrix whose pivot falls below pivotTol times its diagonal entry is
// treated as not positive definite (its condition number exceeds ~1e13).
const pivotTol = 1e-13

// cholesky writes into c the lower-triangular factor C of the symmetric matrix
// a (only its lower triangle is read), a = C Cᵀ, and reports whether a is
// numerically positive definite. c and a may not alias.
func cholesky(c, a []float64, d int) bool {
	for i := range c[:d*d] {
		c[i] = 0
	}
	for j := 0; j < d; j++ {
		ajj := a[j*d+j]
		s := ajj
		for k := 0; k < j; k++ {
			s -= c[j*d+k] * c[j*d+k]
		}
		if !(s > pivotTol*ajj) || math.IsInf(s, 0) {
			return false
		}
		cjj := math.Sqrt(s)
		c[j*d+j] = cjj
		for i := j + 1; i < d; i++ {
			t := a[i*d+j]
			for k := 0; k < j; k++ {
				t -= c[i*d+k] * c[j*d+k]
			}
			c[i*d+j] = t / cjj
		}
	}
	return true
}

// forwardSolve overwrites b with C⁻¹ b for the lower-triangular c.
func forwardSolve(c, b []float64, d int) {
	for i := 0; i < d; i++ {
		s := b[i]
		for k := 0; k < i; k++ {
			s -= c[i*d+k] * b[k]
		}
		b[i] = s / c[i*d+i]
	}
}

// backSolve overwrites b with C⁻ᵀ b for the lower-triangular c.
func backSolve(c, b []float64, d int) {
	for i := d - 1; i >= 0; i-- {
		s := b[i]
		for k := i + 1; k < d; k++ {
			s -= c[k*d+i] * b[k]
		}
		b[i] = s / c[i*d+i]
	}
}

// cholSolve overwrites b with a⁻¹ b where a = C Cᵀ.
func cholSolve(c, b []float64, d int) {
	forwardSolve(c, b, d)
	backSolve(c, b, d)
}

// cholInverse writes a⁻¹ into inv (full, symmetric) where a = C Cᵀ; col is
// scratch of length d.
func cholInverse(c, inv, col []float64, d int) {
	for j := 0; j < d; j++ {
		for i := range col[:d] {
			col[i] = 0
		}
		col[j] = 1
		cholSolve(c, col, d)
		for i := 0; i < d; i++ {
			inv[i*d+j] = col[i]
		}
	}
	symmetrize(inv, d)
}

// cholLogDet returns log det a for a = C Cᵀ.
func cholLogDet(c []float64, d int) float64 {
	s := 0.0
	for i := 0; i < d; i++ {
		s += math.Log(c[i*d+i])
	}
	return 2 * s
}

// symmetrize replaces a by (a + aᵀ)/2.
func symmetrize(a []float64, d int) {
	for i := 0; i < d; i++ {
		for j := 0; j < i; j++ {
			m := 0.5 * (a[i*d+j] + a[j*d+i])
			a[i*d+j], a[j*d+i] = m, m
		}
	}
}

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
