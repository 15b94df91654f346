package dense

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// EigenSym against gonum's mat.EigenSym (LAPACK's dsyev, an independent
// implementation) on random symmetric matrices of sizes 1 to 6, some with
// repeated eigenvalues, some singular, some badly scaled: the eigenvalues
// agree to 1e-13 of the largest, A V = V diag(vals) to the same, and the
// vectors are orthonormal.
func TestEigenSymAgainstGonum(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 11))
	for trial := 0; trial < 600; trial++ {
		d := 1 + trial%6
		a := randomSymmetric(rng, d, trial%5)
		vals, vecs := make([]float64, d), make([]float64, d*d)
		if !EigenSym(vals, vecs, a, d) {
			t.Fatalf("trial %d: refused %v", trial, a)
		}
		var es mat.EigenSym
		if !es.Factorize(mat.NewSymDense(d, append([]float64(nil), a...)), false) {
			t.Fatalf("trial %d: gonum refused it", trial)
		}
		want := es.Values(nil)
		norm := 0.0
		for _, v := range want {
			norm = max(norm, math.Abs(v))
		}
		tol := 1e-13 * max(norm, 1e-300)
		for k := range vals {
			if math.Abs(vals[k]-want[k]) > tol {
				t.Fatalf("trial %d (d=%d): eigenvalues %v, gonum %v", trial, d, vals, want)
			}
		}
		for i := 0; i < d; i++ {
			for k := 0; k < d; k++ {
				av := 0.0
				for j := 0; j < d; j++ {
					av += a[i*d+j] * vecs[j*d+k]
				}
				if math.Abs(av-vals[k]*vecs[i*d+k]) > tol {
					t.Fatalf("trial %d: (A v_%d)_%d = %g, lambda v = %g", trial, k, i, av, vals[k]*vecs[i*d+k])
				}
			}
			for k := 0; k < d; k++ {
				dot := 0.0
				for j := 0; j < d; j++ {
					dot += vecs[j*d+i] * vecs[j*d+k]
				}
				if want := b2f(i == k); math.Abs(dot-want) > 1e-14 {
					t.Fatalf("trial %d: v_%d . v_%d = %g", trial, i, k, dot)
				}
			}
		}
	}
}

// randomSymmetric returns a d×d symmetric matrix: Q diag(l) Q^T with a
// random orthogonal Q (Gram-Schmidt on normal columns) and eigenvalues l of
// a kind: 0 any sign, 1 positive, 2 a repeated pair, 3 one zero, 4 spread
// over twelve orders of magnitude.
func randomSymmetric(rng *rand.Rand, d, kind int) []float64 {
	q := make([]float64, d*d)
	for k := 0; k < d; k++ {
		for {
			for i := 0; i < d; i++ {
				q[i*d+k] = rng.NormFloat64()
			}
			for j := 0; j < k; j++ {
				dot := 0.0
				for i := 0; i < d; i++ {
					dot += q[i*d+k] * q[i*d+j]
				}
				for i := 0; i < d; i++ {
					q[i*d+k] -= dot * q[i*d+j]
				}
			}
			n := 0.0
			for i := 0; i < d; i++ {
				n += q[i*d+k] * q[i*d+k]
			}
			if n > 1e-6 {
				for i := 0; i < d; i++ {
					q[i*d+k] /= math.Sqrt(n)
				}
				break
			}
		}
	}
	l := make([]float64, d)
	for i := range l {
		switch kind {
		case 0:
			l[i] = 4 * rng.NormFloat64()
		case 1, 2, 3:
			l[i] = 0.1 + 5*rng.Float64()
		case 4:
			l[i] = math.Pow(10, -6+12*rng.Float64())
		}
	}
	if kind == 2 && d > 1 {
		l[1] = l[0]
	}
	if kind == 3 {
		l[d-1] = 0
	}
	a := make([]float64, d*d)
	for i := 0; i < d; i++ {
		for j := 0; j <= i; j++ {
			s := 0.0
			for k := 0; k < d; k++ {
				s += q[i*d+k] * l[k] * q[j*d+k]
			}
			a[i*d+j], a[j*d+i] = s, s
		}
	}
	return a
}

func b2f(b bool) float64 {
	if b {
		return 1
	}
	return 0
}

// A non-finite entry is refused; a diagonal matrix comes back sorted, its
// vectors the unit vectors permuted.
func TestEigenSymEdges(t *testing.T) {
	vals, vecs := make([]float64, 2), make([]float64, 4)
	if EigenSym(vals, vecs, []float64{1, math.NaN(), math.NaN(), 2}, 2) {
		t.Error("NaN entry accepted")
	}
	if !EigenSym(vals, vecs, []float64{3, 0, 0, -1}, 2) || vals[0] != -1 || vals[1] != 3 ||
		vecs[0] != 0 || vecs[1] != 1 || vecs[2] != 1 || vecs[3] != 0 {
		t.Errorf("diag(3, -1): values %v, vectors %v", vals, vecs)
	}
}
