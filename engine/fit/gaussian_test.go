package fit

import (
	"errors"
	"math"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/mat"
)

func sym(d int, v ...float64) *mat.SymDense { return mat.NewSymDense(d, v) }

func normal(mean []float64, cov *mat.SymDense) Gaussian { return Gaussian{Mean: mean, Cov: cov} }

var cov3 = sym(3,
	2.0, 0.6, -0.3,
	0.6, 1.5, 0.4,
	-0.3, 0.4, 0.8)

var cov3b = sym(3,
	1.2, -0.2, 0.1,
	-0.2, 0.9, 0.3,
	0.1, 0.3, 2.5)

func TestKLGaussian1DClosedForm(t *testing.T) {
	// KL(N(m1,s1²) || N(m2,s2²)) = log(s2/s1) + (s1² + (m1-m2)²)/(2 s2²) - 1/2,
	// the univariate closed form (standard, from memory).
	cases := []struct{ m1, s1, m2, s2, tol float64 }{
		{0, 1, 0, 1, 1e-15},
		{0.5, 2, -1, 0.7, 1e-14},
		{10, 1e-3, 10.001, 2e-3, 1e-12},
		{-3, 5, 4, 1, 1e-13},
	}
	for _, c := range cases {
		want := math.Log(c.s2/c.s1) + (c.s1*c.s1+(c.m1-c.m2)*(c.m1-c.m2))/(2*c.s2*c.s2) - 0.5
		got, err := KLGaussian(normal([]float64{c.m1}, sym(1, c.s1*c.s1)), normal([]float64{c.m2}, sym(1, c.s2*c.s2)))
		if err != nil {
			t.Fatal(err)
		}
		if !scalar.EqualWithinAbsOrRel(got, want, c.tol, c.tol) {
			t.Errorf("KL(N(%v,%v²)||N(%v,%v²)) = %v, want %v", c.m1, c.s1, c.m2, c.s2, got, want)
		}
	}
}

// matKL is KL(q||p) computed directly with gonum's mat (inverse, trace,
// log-determinants), independently of the package's own factorisation.
func matKL(t *testing.T, q, p Gaussian) float64 {
	t.Helper()
	d := q.Dim()
	var pinv mat.Dense
	if err := pinv.Inverse(p.Cov); err != nil {
		t.Fatal(err)
	}
	var prod mat.Dense
	prod.Mul(&pinv, q.Cov)
	diff := mat.NewVecDense(d, nil)
	diff.SubVec(mat.NewVecDense(d, append([]float64(nil), p.Mean...)), mat.NewVecDense(d, append([]float64(nil), q.Mean...)))
	maha := mat.Inner(diff, &pinv, diff)
	return 0.5 * (mat.Trace(&prod) + maha - float64(d) + math.Log(mat.Det(p.Cov)) - math.Log(mat.Det(q.Cov)))
}

func TestKLGaussianAgainstMat(t *testing.T) {
	// The trace formula evaluated with gonum mat's general inverse and
	// determinant (independent of the package's Cholesky routines).
	q := normal([]float64{0.3, -1, 2}, cov3)
	p := normal([]float64{-0.5, 0.2, 1.5}, cov3b)
	for _, pair := range [][2]Gaussian{{q, p}, {p, q}, {q, q}} {
		got, err := KLGaussian(pair[0], pair[1])
		if err != nil {
			t.Fatal(err)
		}
		if want := matKL(t, pair[0], pair[1]); !scalar.EqualWithinAbsOrRel(got, want, 1e-13, 1e-12) {
			t.Errorf("KLGaussian = %v, gonum mat %v", got, want)
		}
	}
	if _, err := KLGaussian(q, normal([]float64{0}, sym(1, 1))); !errors.Is(err, ErrBadInput) {
		t.Errorf("KL of mismatched dimensions: err = %v, want ErrBadInput", err)
	}
}

func TestMomentMatch(t *testing.T) {
	cov := sym(2, 2, 0.5, 0.5, 1)
	g, err := MomentMatch([]float64{1, 2}, cov)
	if err != nil {
		t.Fatal(err)
	}
	cov.SetSym(0, 0, 99)
	if g.Cov.At(0, 0) != 2 || g.Mean[1] != 2 {
		t.Errorf("MomentMatch did not copy its input: %v %v", g.Mean, g.Cov)
	}
	bad := []struct {
		name string
		mean []float64
		cov  *mat.SymDense
		want error
	}{
		{"indefinite", []float64{0, 0}, sym(2, 1, 2, 2, 1), ErrNotPositiveDefinite},
		{"singular", []float64{0, 0}, sym(2, 1, 1, 1, 1), ErrNotPositiveDefinite},
		{"negative variance", []float64{0}, sym(1, -1), ErrNotPositiveDefinite},
		{"NaN mean", []float64{math.NaN()}, sym(1, 1), ErrNonFinite},
		{"Inf covariance", []float64{0, 0}, sym(2, math.Inf(1), 0, 0, 1), ErrNonFinite},
		{"size mismatch", []float64{0, 0, 0}, sym(2, 1, 0, 0, 1), ErrBadInput},
		{"no covariance", []float64{0}, nil, ErrBadInput},
		{"empty", nil, nil, ErrBadInput},
	}
	for _, c := range bad {
		if _, err := MomentMatch(c.mean, c.cov); !errors.Is(err, c.want) {
			t.Errorf("%s: err = %v, want %v", c.name, err, c.want)
		}
	}
}

func TestLinalgAgainstGonum(t *testing.T) {
	// The small Cholesky routines against gonum's mat.Cholesky.
	d := 3
	a := make([]float64, d*d)
	sliceFromSym(a, cov3)
	c := make([]float64, d*d)
	if !cholesky(c, a, d) {
		t.Fatal("cholesky refused a positive definite matrix")
	}
	var ch mat.Cholesky
	ch.Factorize(cov3)
	var l mat.TriDense
	ch.LTo(&l)
	var inv mat.SymDense
	if err := ch.InverseTo(&inv); err != nil {
		t.Fatal(err)
	}
	myInv := make([]float64, d*d)
	cholInverse(c, myInv, make([]float64, d), d)
	for i := 0; i < d; i++ {
		for j := 0; j < d; j++ {
			if math.Abs(c[i*d+j]-l.At(i, j)) > 1e-14 {
				t.Errorf("L[%d][%d] = %v, gonum %v", i, j, c[i*d+j], l.At(i, j))
			}
			if math.Abs(myInv[i*d+j]-inv.At(i, j)) > 1e-13 {
				t.Errorf("inverse[%d][%d] = %v, gonum %v", i, j, myInv[i*d+j], inv.At(i, j))
			}
		}
	}
	if got, want := cholLogDet(c, d), ch.LogDet(); math.Abs(got-want) > 1e-14 {
		t.Errorf("log det = %v, gonum %v", got, want)
	}
	if cholesky(c, []float64{1, 2, 2, 1}, 2) {
		t.Error("cholesky accepted an indefinite matrix")
	}
}
