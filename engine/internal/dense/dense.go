// Package dense holds small dense linear algebra on row-major d×d slices
// (d <= 4 in the engine): a Cholesky factorisation and the solves, inverse
// and log-determinant that follow from it. The routines write into
// caller-allocated slices and never allocate, so iterations and per-node
// loops can call them freely.
package dense

import "math"

// Cholesky writes into c the lower-triangular factor C of the symmetric
// matrix a (only its lower triangle is read), a = C Cᵀ, and reports whether
// a is numerically positive definite: every pivot must exceed pivotTol times
// its diagonal entry (pivotTol 0 asks only for positive pivots). c and a may
// not alias.
func Cholesky(c, a []float64, d int, pivotTol float64) bool {
	for i := range c[:d*d] {
		c[i] = 0
	}
	for j := 0; j < d; j++ {
		ajj := a[j*d+j]
		s := ajj
		for k := 0; k < j; k++ {
			s -= c[j*d+k] * c[j*d+k]
		}
		if !(s > pivotTol*ajj) || !(s > 0) || math.IsInf(s, 0) {
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

// ForwardSolve overwrites b with C⁻¹ b for the lower-triangular c.
func ForwardSolve(c, b []float64, d int) {
	for i := 0; i < d; i++ {
		s := b[i]
		for k := 0; k < i; k++ {
			s -= c[i*d+k] * b[k]
		}
		b[i] = s / c[i*d+i]
	}
}

// BackSolve overwrites b with C⁻ᵀ b for the lower-triangular c.
func BackSolve(c, b []float64, d int) {
	for i := d - 1; i >= 0; i-- {
		s := b[i]
		for k := i + 1; k < d; k++ {
			s -= c[k*d+i] * b[k]
		}
		b[i] = s / c[i*d+i]
	}
}

// CholSolve overwrites b with a⁻¹ b where a = C Cᵀ.
func CholSolve(c, b []float64, d int) {
	ForwardSolve(c, b, d)
	BackSolve(c, b, d)
}

// CholInverse writes a⁻¹ into inv (full and exactly symmetric) where
// a = C Cᵀ; col is scratch of length d.
func CholInverse(c, inv, col []float64, d int) {
	for j := 0; j < d; j++ {
		for i := range col[:d] {
			col[i] = 0
		}
		col[j] = 1
		CholSolve(c, col, d)
		for i := 0; i < d; i++ {
			inv[i*d+j] = col[i]
		}
	}
	Symmetrize(inv, d)
}

// CholLogDet returns log det a for a = C Cᵀ.
func CholLogDet(c []float64, d int) float64 {
	s := 0.0
	for i := 0; i < d; i++ {
		s += math.Log(c[i*d+i])
	}
	return 2 * s
}

// Symmetrize replaces a by (a + aᵀ)/2.
func Symmetrize(a []float64, d int) {
	for i := 0; i < d; i++ {
		for j := 0; j < i; j++ {
			m := 0.5 * (a[i*d+j] + a[j*d+i])
			a[i*d+j], a[j*d+i] = m, m
		}
	}
}
