package dense

import "math"

// maxJacobiSweeps bounds EigenSym's sweeps; the cyclic Jacobi method
// converges quadratically, in 5 to 10 sweeps for the engine's sizes.
const maxJacobiSweeps = 60

// EigenSym writes the eigenvalues of the symmetric d×d matrix a in
// ascending order into vals and, when vecs is not nil, the matching
// orthonormal eigenvectors as the columns of vecs (vecs[i*d+k] is
// component i of vector k). It reads the upper triangle of a (as gonum's
// SymDense does) and leaves a as it is. It reports false where a has a non-finite entry or the sweeps do not
// converge. The method is cyclic Jacobi (Golub and Van Loan, Matrix
// Computations, 4th ed., section 8.5): rotations that zero one
// off-diagonal pair at a time, accurate to rounding for the small
// matrices the engine has (d <= 4; it allocates only above that).
func EigenSym(vals, vecs, a []float64, d int) bool {
	var buf [16]float64
	w := buf[:]
	if d*d > len(buf) {
		w = make([]float64, d*d)
	}
	w = w[:d*d]
	for i := 0; i < d; i++ {
		for j := i; j < d; j++ {
			v := a[i*d+j]
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return false
			}
			w[i*d+j], w[j*d+i] = v, v
		}
	}
	if vecs != nil {
		clear(vecs[:d*d])
		for i := 0; i < d; i++ {
			vecs[i*d+i] = 1
		}
	}
	converged := false
	for sweep := 0; sweep < maxJacobiSweeps && !converged; sweep++ {
		off, diag := 0.0, 0.0
		for p := 0; p < d; p++ {
			diag += w[p*d+p] * w[p*d+p]
			for q := p + 1; q < d; q++ {
				off += w[p*d+q] * w[p*d+q]
			}
		}
		if off <= 1e-34*diag || off == 0 {
			converged = true
			break
		}
		for p := 0; p < d; p++ {
			for q := p + 1; q < d; q++ {
				apq := w[p*d+q]
				if apq == 0 {
					continue
				}
				c, s := jacobiRotation(w[p*d+p], w[q*d+q], apq)
				// A = J^T A J: the columns p and q, then the rows.
				rotateColumns(w, d, d, p, q, c, s)
				for k := 0; k < d; k++ {
					pk, qk := w[p*d+k], w[q*d+k]
					w[p*d+k], w[q*d+k] = c*pk-s*qk, s*pk+c*qk
				}
				w[p*d+q], w[q*d+p] = 0, 0
				if vecs != nil {
					rotateColumns(vecs, d, d, p, q, c, s)
				}
			}
		}
	}
	if !converged {
		return false
	}
	for i := 0; i < d; i++ {
		vals[i] = w[i*d+i]
	}
	// Ascending order, the vectors alongside (a selection sort: d is small).
	for i := 0; i < d; i++ {
		m := i
		for j := i + 1; j < d; j++ {
			if vals[j] < vals[m] {
				m = j
			}
		}
		if m == i {
			continue
		}
		vals[i], vals[m] = vals[m], vals[i]
		if vecs != nil {
			for k := 0; k < d; k++ {
				vecs[k*d+i], vecs[k*d+m] = vecs[k*d+m], vecs[k*d+i]
			}
		}
	}
	return true
}

// jacobiRotation returns the cosine and sine of the rotation that zeroes
// the off-diagonal entry apq of the symmetric 2×2 matrix [app apq; apq
// aqq]: t = s/c is the smaller root of t^2 + 2 tau t - 1 = 0, tau = (aqq -
// app)/(2 apq) (Golub and Van Loan, algorithm 8.5.1). EigenSym and
// ThinSVD (on a pair of columns' Gram matrix) share it.
func jacobiRotation(app, aqq, apq float64) (c, s float64) {
	tau := (aqq - app) / (2 * apq)
	var t float64
	switch {
	case math.Abs(tau) > 1e150:
		t = 1 / (2 * tau) // sqrt(1 + tau^2) would overflow
	case tau >= 0:
		t = 1 / (tau + math.Sqrt(1+tau*tau))
	default:
		t = -1 / (-tau + math.Sqrt(1+tau*tau))
	}
	c = 1 / math.Sqrt(1+t*t)
	return c, t * c
}

// rotateColumns replaces columns p and q of the row-major rows × cols
// matrix a by c a_p - s a_q and s a_p + c a_q.
func rotateColumns(a []float64, rows, cols, p, q int, c, s float64) {
	for k := 0; k < rows; k++ {
		kp, kq := a[k*cols+p], a[k*cols+q]
		a[k*cols+p], a[k*cols+q] = c*kp-s*kq, s*kp+c*kq
	}
}
