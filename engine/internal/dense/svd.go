package dense

import (
	"math"
	"sort"
)

// ThinSVD returns the thin singular value decomposition X = U diag(sigma)
// V^T of the n by m matrix x (row-major, n >= 1, m small: a quadratic
// form's scalar terms), by one-sided Jacobi rotations (Hestenes 1958;
// Demmel and Veselic 1992 show its singular values are accurate to
// relative precision): pairs of columns are rotated until every pair is
// orthogonal to working precision, then sigma_j is column j's norm, u_j the
// column over it and V the product of the rotations. u (n by m) and v (m
// by m) are row-major; sigma is in decreasing order, zero beyond min(n, m)
// and for numerically zero columns (whose u columns are zero). It reports false where
// the sweeps do not converge. A routine of our own: gonum's SVD brought
// 66 KB (gzip) of its LAPACK into the page's WebAssembly for this alone.
// The quadratic forms of engine/eval use it.
func ThinSVD(x []float64, n, m int) (u, sigma, v []float64, ok bool) {
	a := append([]float64(nil), x...)
	v = make([]float64, m*m)
	for j := 0; j < m; j++ {
		v[j*m+j] = 1
	}
	const eps = 0x1p-52
	// A column whose squared norm is below tiny is numerically zero (its
	// norm under eps times the matrix's Frobenius norm, far below the
	// rank's threshold): it is not rotated (with n < m the extra columns
	// can only become zero, never orthogonal to working precision) and its
	// singular value is 0.
	fro2 := 0.0
	for _, e := range a {
		fro2 += e * e
	}
	tiny := eps * eps * fro2
	converged := false
	for sweep := 0; sweep < 60 && !converged; sweep++ {
		converged = true
		for p := 0; p < m-1; p++ {
			for q := p + 1; q < m; q++ {
				var alpha, beta, gamma float64
				for i := 0; i < n; i++ {
					ap, aq := a[i*m+p], a[i*m+q]
					alpha += ap * ap
					beta += aq * aq
					gamma += ap * aq
				}
				if gamma == 0 || alpha <= tiny || beta <= tiny || math.Abs(gamma) <= eps*math.Sqrt(alpha*beta) {
					continue
				}
				converged = false
				// The rotation that makes the pair orthogonal is the one
				// that diagonalises their Gram matrix [alpha gamma; gamma
				// beta].
				c, s := jacobiRotation(alpha, beta, gamma)
				rotateColumns(a, n, m, p, q, c, s)
				rotateColumns(v, m, m, p, q, c, s)
			}
		}
	}
	if !converged {
		return nil, nil, nil, false
	}
	norms := make([]float64, m)
	for j := 0; j < m; j++ {
		s := 0.0
		for i := 0; i < n; i++ {
			s += a[i*m+j] * a[i*m+j]
		}
		if s > tiny {
			norms[j] = math.Sqrt(s)
		}
	}
	order := make([]int, m)
	for j := range order {
		order[j] = j
	}
	sort.SliceStable(order, func(i, j int) bool { return norms[order[i]] > norms[order[j]] })
	// At most min(n, m) singular values: with n < m the rest are zero.
	k0 := min(n, m)
	u = make([]float64, n*m)
	sigma = make([]float64, m)
	vs := make([]float64, m*m)
	for k, j := range order {
		if k >= k0 {
			break
		}
		sigma[k] = norms[j]
		for i := 0; i < n; i++ {
			if norms[j] > 0 {
				u[i*m+k] = a[i*m+j] / norms[j]
			}
		}
		for i := 0; i < m; i++ {
			vs[i*m+k] = v[i*m+j]
		}
	}
	return u, sigma, vs, true
}
