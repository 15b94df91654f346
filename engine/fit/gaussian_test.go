package fit

import (
	"errors"
	"math"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

func sym(d int, v ...float64) *mat.SymDense { return mat.NewSymDense(d, v) }

func gauss(mean []float64, cov *mat.SymDense) Gaussian { return Gaussian{Mean: mean, Cov: cov} }

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
		got, err := KLGaussian(gauss([]float64{c.m1}, sym(1, c.s1*c.s1)), gauss([]float64{c.m2}, sym(1, c.s2*c.s2)))
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
	q := gauss([]float64{0.3, -1, 2}, cov3)
	p := gauss([]float64{-0.5, 0.2, 1.5}, cov3b)
	for _, pair := range [][2]Gaussian{{q, p}, {p, q}, {q, q}} {
		got, err := KLGaussian(pair[0], pair[1])
		if err != nil {
			t.Fatal(err)
		}
		if want := matKL(t, pair[0], pair[1]); !scalar.EqualWithinAbsOrRel(got, want, 1e-13, 1e-12) {
			t.Errorf("KLGaussian = %v, gonum mat %v", got, want)
		}
	}
	if _, err := KLGaussian(q, gauss([]float64{0}, sym(1, 1))); !errors.Is(err, ErrBadInput) {
		t.Errorf("KL of mismatched dimensions: err = %v, want ErrBadInput", err)
	}
}

func TestEvaluatorAgainstFormula(t *testing.T) {
	// log N(x; mu, Σ) = -(d/2) log 2pi - (1/2) log det Σ - (1/2)(x-mu)ᵀΣ⁻¹(x-mu)
	// with gonum mat's inverse and determinant; in 1-D against distuv.Normal.
	g := gauss([]float64{0.3, -1, 2}, cov3)
	e, err := NewEvaluator(g)
	if err != nil {
		t.Fatal(err)
	}
	var inv mat.Dense
	if err := inv.Inverse(cov3); err != nil {
		t.Fatal(err)
	}
	pts := [][]float64{{0.3, -1, 2}, {1, 1, 1}, {-4, 3, 0.5}, {10, -10, 7}}
	cols := [][]float64{make([]float64, len(pts)), make([]float64, len(pts)), make([]float64, len(pts))}
	out := make([]float64, len(pts))
	for i, x := range pts {
		for k := range x {
			cols[k][i] = x[k]
		}
	}
	e.LogPDFBlock(cols, out)
	for i, x := range pts {
		r := mat.NewVecDense(3, []float64{x[0] - 0.3, x[1] + 1, x[2] - 2})
		want := -1.5*math.Log(2*math.Pi) - 0.5*math.Log(mat.Det(cov3)) - 0.5*mat.Inner(r, &inv, r)
		if got := e.LogPDF(x); !scalar.EqualWithinAbsOrRel(got, want, 1e-13, 1e-13) {
			t.Errorf("LogPDF(%v) = %v, formula %v", x, got, want)
		}
		if !scalar.EqualWithinAbsOrRel(out[i], want, 1e-13, 1e-13) {
			t.Errorf("LogPDFBlock point %d = %v, formula %v", i, out[i], want)
		}
		if m2 := e.Mahalanobis2(x); !scalar.EqualWithinAbsOrRel(m2, mat.Inner(r, &inv, r), 1e-13, 1e-13) {
			t.Errorf("Mahalanobis2(%v) = %v", x, m2)
		}
	}
	// Entropy (1/2) log det(2 pi e Σ), with gonum's determinant.
	h, err := Entropy(g)
	if err != nil {
		t.Fatal(err)
	}
	if want := 0.5 * math.Log(math.Pow(2*math.Pi*math.E, 3)*mat.Det(cov3)); !scalar.EqualWithinAbsOrRel(h, want, 1e-14, 1e-14) {
		t.Errorf("Entropy = %v, formula %v", h, want)
	}
	e1, _ := NewEvaluator(gauss([]float64{2}, sym(1, 0.25)))
	n1 := distuv.Normal{Mu: 2, Sigma: 0.5}
	for _, x := range []float64{-1, 2, 2.7} {
		if got, want := e1.LogPDF([]float64{x}), n1.LogProb(x); !scalar.EqualWithinAbsOrRel(got, want, 1e-14, 1e-14) {
			t.Errorf("1-D LogPDF(%v) = %v, distuv %v", x, got, want)
		}
	}
	if allocs := testing.AllocsPerRun(100, func() { e.LogPDFBlock(cols, out) }); allocs != 0 {
		t.Errorf("LogPDFBlock allocates %v times", allocs)
	}
}

func TestCentral95(t *testing.T) {
	// Chi-square quantiles: for d = 2 the chi-square is exponential with
	// mean 2, so the 0.95 quantile is -2 log 0.05 (closed form); for d = 1 it
	// is z², z = 1.959963984540054 the 0.975 normal quantile (Abramowitz and
	// Stegun 26.2, Table 26.1; digits from memory); for d = 4 the closed form
	// of the CDF 1 - e^(-x/2)(1 + x/2) must give 0.95 there.
	if got, want := Central95Radius2(2), -2*math.Log(0.05); !scalar.EqualWithinAbsOrRel(got, want, 1e-9, 1e-9) {
		t.Errorf("Central95Radius2(2) = %v, want %v", got, want)
	}
	z := 1.959963984540054
	if got := Central95Radius2(1); !scalar.EqualWithinAbsOrRel(got, z*z, 1e-9, 1e-9) {
		t.Errorf("Central95Radius2(1) = %v, want %v", got, z*z)
	}
	x := Central95Radius2(4)
	if cdf := 1 - math.Exp(-x/2)*(1+x/2); math.Abs(cdf-0.95) > 1e-9 {
		t.Errorf("chi-square(4) CDF at Central95Radius2(4) = %v, want 0.95", cdf)
	}
	// A point just inside and just outside the ellipse of a correlated 2-D
	// Gaussian: x = mu + r L u with |u| = 1 has Mahalanobis distance r.
	g := gauss([]float64{1, 2}, sym(2, 4, 1.2, 1.2, 1))
	e, err := NewEvaluator(g)
	if err != nil {
		t.Fatal(err)
	}
	var ch mat.Cholesky
	ch.Factorize(g.Cov)
	var l mat.TriDense
	ch.LTo(&l)
	r := math.Sqrt(Central95Radius2(2))
	for _, c := range []struct {
		scale float64
		in    bool
	}{{0.999, true}, {1.001, false}} {
		u := mat.NewVecDense(2, []float64{0.6, 0.8})
		var lu mat.VecDense
		lu.MulVec(&l, u)
		x := []float64{1 + c.scale*r*lu.AtVec(0), 2 + c.scale*r*lu.AtVec(1)}
		if got := e.InCentral95(x); got != c.in {
			t.Errorf("InCentral95 at %v×radius = %v, want %v", c.scale, got, c.in)
		}
	}
}

func TestMarginals(t *testing.T) {
	g := gauss([]float64{0.3, -1, 2}, cov3)
	sd := g.SD()
	corr := g.Corr()
	for i := 0; i < 3; i++ {
		if want := math.Sqrt(cov3.At(i, i)); sd[i] != want {
			t.Errorf("SD[%d] = %v, want %v", i, sd[i], want)
		}
		for j := 0; j < 3; j++ {
			if want := cov3.At(i, j) / math.Sqrt(cov3.At(i, i)*cov3.At(j, j)); math.Abs(corr.At(i, j)-want) > 1e-15 {
				t.Errorf("Corr[%d][%d] = %v, want %v", i, j, corr.At(i, j), want)
			}
		}
		// The marginal interval against gonum's distuv.Normal quantiles.
		n := distuv.Normal{Mu: g.Mean[i], Sigma: sd[i]}
		iv := g.Interval(i, 0.95)
		if !scalar.EqualWithinAbs(iv[0], n.Quantile(0.025), 1e-12) || !scalar.EqualWithinAbs(iv[1], n.Quantile(0.975), 1e-12) {
			t.Errorf("Interval(%d) = %v, distuv [%v, %v]", i, iv, n.Quantile(0.025), n.Quantile(0.975))
		}
	}
	rows := Rows(cov3)
	if len(rows) != 3 || rows[1][2] != 0.4 || rows[2][1] != 0.4 {
		t.Errorf("Rows = %v", rows)
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
