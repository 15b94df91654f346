package quadrature

import "math"

// Small dense linear algebra on row-major d×d slices (d <= 4), without
// allocation.

// cholesky writes the lower factor c of the symmetric positive definite a
// (a = c c^T) and reports whether a is positive definite.
func cholesky(c, a []float64, d int) bool {
	for i := range c[:d*d] {
		c[i] = 0
	}
	for j := 0; j < d; j++ {
		s := a[j*d+j]
		for k := 0; k < j; k++ {
			s -= c[j*d+k] * c[j*d+k]
		}
		if !(s > 0) || math.IsInf(s, 0) {
			return false
		}
		cj := math.Sqrt(s)
		c[j*d+j] = cj
		for i := j + 1; i < d; i++ {
			s := a[i*d+j]
			for k := 0; k < j; k++ {
				s -= c[i*d+k] * c[j*d+k]
			}
			c[i*d+j] = s / cj
		}
	}
	return true
}

// cholSolve solves (c c^T) x = b in place of b.
func cholSolve(c, b []float64, d int) {
	for i := 0; i < d; i++ {
		s := b[i]
		for k := 0; k < i; k++ {
			s -= c[i*d+k] * b[k]
		}
		b[i] = s / c[i*d+i]
	}
	for i := d - 1; i >= 0; i-- {
		s := b[i]
		for k := i + 1; k < d; k++ {
			s -= c[k*d+i] * b[k]
		}
		b[i] = s / c[i*d+i]
	}
}

// cholInverse writes (c c^T)^-1 into inv, using col (len d) as scratch.
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
}

// cholLogDet returns log det of c c^T.
func cholLogDet(c []float64, d int) float64 {
	s := 0.0
	for i := 0; i < d; i++ {
		s += math.Log(c[i*d+i])
	}
	return 2 * s
}
