package dense

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// ThinSVD against gonum's SVD (an independent LAPACK-based routine) on
// random matrices, tall, square, wide and rank deficient: the singular
// values agree, U diag(sigma) V^T gives X back, and the columns of U and V
// for non-zero singular values are orthonormal.
func TestThinSVDAgainstGonum(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 11))
	for trial := 0; trial < 300; trial++ {
		n, m := 1+rng.IntN(12), 1+rng.IntN(8)
		x := make([]float64, n*m)
		for i := range x {
			x[i] = rng.NormFloat64() * math.Pow(10, float64(rng.IntN(7)-3))
		}
		if trial%3 == 0 && m > 1 {
			// a column that repeats another, scaled: rank deficient
			a, b := rng.IntN(m), rng.IntN(m)
			for i := 0; i < n; i++ {
				x[i*m+b] = 2.5 * x[i*m+a]
			}
		}
		u, sigma, v, ok := ThinSVD(x, n, m)
		if !ok {
			t.Fatalf("trial %d (%d x %d): no convergence", trial, n, m)
		}
		var svd mat.SVD
		if !svd.Factorize(mat.NewDense(n, m, x), mat.SVDThin) {
			t.Fatalf("trial %d: gonum's SVD failed", trial)
		}
		want := svd.Values(nil)
		top := want[0]
		for k := 0; k < m; k++ {
			w := 0.0
			if k < len(want) {
				w = want[k]
			}
			if math.Abs(sigma[k]-w) > 1e-13*top {
				t.Errorf("trial %d (%d x %d): sigma_%d = %.17g, gonum %.17g", trial, n, m, k, sigma[k], w)
			}
		}
		for i := 0; i < n; i++ {
			for j := 0; j < m; j++ {
				s := 0.0
				for k := 0; k < m; k++ {
					s += u[i*m+k] * sigma[k] * v[j*m+k]
				}
				if math.Abs(s-x[i*m+j]) > 1e-13*top {
					t.Errorf("trial %d: (U S V^T)_%d%d = %.17g, x = %.17g", trial, i, j, s, x[i*m+j])
				}
			}
		}
		for a := 0; a < m; a++ {
			for b := a; b < m; b++ {
				if !(sigma[a] > 0 && sigma[b] > 0) {
					continue
				}
				uu, vv := 0.0, 0.0
				for i := 0; i < n; i++ {
					uu += u[i*m+a] * u[i*m+b]
				}
				for i := 0; i < m; i++ {
					vv += v[i*m+a] * v[i*m+b]
				}
				want := 0.0
				if a == b {
					want = 1
				}
				// Columns for singular values near rounding are directions
				// of noise: orthonormal to a precision relative to theirs.
				tol := 1e-12 * top / math.Min(sigma[a], sigma[b])
				if math.Abs(uu-want) > max(tol, 1e-12) || math.Abs(vv-want) > 1e-12 {
					t.Errorf("trial %d: u_%d.u_%d = %g, v_%d.v_%d = %g", trial, a, b, uu, a, b, vv)
				}
			}
		}
	}
}
