package gauss

import (
	"errors"
	"math"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distmv"
	"gonum.org/v1/gonum/stat/distuv"
)

func sym(d int, v ...float64) *mat.SymDense { return mat.NewSymDense(d, v) }

var cov3 = sym(3,
	2.0, 0.6, -0.3,
	0.6, 1.5, 0.4,
	-0.3, 0.4, 0.8)

func prepare(t *testing.T, g Gaussian) *Prepared {
	t.Helper()
	p, err := Prepare(g)
	if err != nil {
		t.Fatal(err)
	}
	return p
}

func TestLogPDFAgainstFormulaAndDistmv(t *testing.T) {
	// log N(x; mu, Σ) = -(d/2) log 2pi - (1/2) log det Σ - (1/2)(x-mu)ᵀΣ⁻¹(x-mu)
	// with gonum mat's inverse and determinant, and gonum's distmv.Normal
	// (independent implementations); in 1-D against distuv.Normal.
	g := Gaussian{Mean: []float64{0.3, -1, 2}, Cov: cov3}
	p := prepare(t, g)
	var inv mat.Dense
	if err := inv.Inverse(cov3); err != nil {
		t.Fatal(err)
	}
	n, ok := distmv.NewNormal(g.Mean, g.Cov, nil)
	if !ok {
		t.Fatal("distmv refused the covariance")
	}
	pts := [][]float64{{0.3, -1, 2}, {1, 1, 1}, {-4, 3, 0.5}, {10, -10, 7}}
	cols := [][]float64{make([]float64, len(pts)), make([]float64, len(pts)), make([]float64, len(pts))}
	out := make([]float64, len(pts))
	for i, x := range pts {
		for k := range x {
			cols[k][i] = x[k]
		}
	}
	p.LogPDFBlock(cols, out)
	for i, x := range pts {
		r := mat.NewVecDense(3, []float64{x[0] - 0.3, x[1] + 1, x[2] - 2})
		want := -1.5*math.Log(2*math.Pi) - 0.5*math.Log(mat.Det(cov3)) - 0.5*mat.Inner(r, &inv, r)
		if got := p.LogPDF(x); !scalar.EqualWithinAbsOrRel(got, want, 1e-13, 1e-13) {
			t.Errorf("LogPDF(%v) = %v, formula %v", x, got, want)
		}
		if got := n.LogProb(x); !scalar.EqualWithinAbsOrRel(p.LogPDF(x), got, 1e-13, 1e-13) {
			t.Errorf("LogPDF(%v) = %v, distmv %v", x, p.LogPDF(x), got)
		}
		if !scalar.EqualWithinAbsOrRel(out[i], want, 1e-13, 1e-13) {
			t.Errorf("LogPDFBlock point %d = %v, formula %v", i, out[i], want)
		}
		if m2 := p.Mahalanobis2(x); !scalar.EqualWithinAbsOrRel(m2, mat.Inner(r, &inv, r), 1e-13, 1e-13) {
			t.Errorf("Mahalanobis2(%v) = %v", x, m2)
		}
	}
	if h, want := p.Entropy(), n.Entropy(); !scalar.EqualWithinAbsOrRel(h, want, 1e-14, 1e-14) {
		t.Errorf("Entropy = %v, distmv %v", h, want)
	}
	// The precision against gonum's general inverse.
	for i := 0; i < 3; i++ {
		for j := 0; j < 3; j++ {
			if got, want := p.Precision()[i][j], inv.At(i, j); !scalar.EqualWithinAbsOrRel(got, want, 1e-13, 1e-13) {
				t.Errorf("precision[%d][%d] = %v, gonum inverse %v", i, j, got, want)
			}
		}
	}
	p1 := prepare(t, Gaussian{Mean: []float64{2}, Cov: sym(1, 0.25)})
	n1 := distuv.Normal{Mu: 2, Sigma: 0.5}
	for _, x := range []float64{-1, 2, 2.7} {
		if got, want := p1.LogPDF([]float64{x}), n1.LogProb(x); !scalar.EqualWithinAbsOrRel(got, want, 1e-14, 1e-14) {
			t.Errorf("1-D LogPDF(%v) = %v, distuv %v", x, got, want)
		}
	}
	if allocs := testing.AllocsPerRun(100, func() { p.LogPDFBlock(cols, out) }); allocs != 0 {
		t.Errorf("LogPDFBlock allocates %v times", allocs)
	}
}

func TestMarginalPDF(t *testing.T) {
	// A marginal of a normal is the normal of its mean and variance
	// (standard result); against distuv.Normal.
	p := prepare(t, Gaussian{Mean: []float64{0.3, -1, 2}, Cov: cov3})
	for i := 0; i < 3; i++ {
		n := distuv.Normal{Mu: p.Mean[i], Sigma: math.Sqrt(cov3.At(i, i))}
		for _, x := range []float64{-2, 0.1, 3} {
			if got, want := p.MarginalPDF(i, x), n.Prob(x); !scalar.EqualWithinAbsOrRel(got, want, 1e-15, 1e-14) {
				t.Errorf("marginal %d at %g: %g, distuv %g", i, x, got, want)
			}
		}
	}
}

func TestPrepareRejects(t *testing.T) {
	bad := []Gaussian{
		{Mean: []float64{0, 0}, Cov: sym(1, 1)},
		{Mean: []float64{math.NaN()}, Cov: sym(1, 1)},
		{Mean: []float64{0, 0}, Cov: sym(2, 1, 1, 1, 1)}, // singular
		{Mean: []float64{0}, Cov: sym(1, -1)},
		{Mean: nil, Cov: nil},
	}
	for _, g := range bad {
		if _, err := Prepare(g); !errors.Is(err, ErrBad) {
			t.Errorf("%v: err = %v, want ErrBad", g.Mean, err)
		}
	}
	// Scales sixteen orders apart: the covariance's condition is 1e32, yet
	// the correlation matrix is the identity and the precision is exact.
	p := prepare(t, Gaussian{Mean: []float64{0, 0}, Cov: sym(2, 1e-16, 0, 0, 1e16)})
	if got := p.Precision()[0][0]; math.Abs(got/1e16-1) > 1e-14 {
		t.Errorf("precision %g, want 1e16", got)
	}
}

func TestEllipseAtMahalanobisRadius(t *testing.T) {
	cases := []struct {
		name          string
		mx, my        float64
		sxx, sxy, syy float64
		mass          float64
	}{
		{"unit", 0, 0, 1, 0, 1, 0.39},
		{"correlated", 1.5, -2, 2.0, -1.2, 1.0, 0.86},
		{"narrow", 0, 1e3, 1e-4, 0, 4, 0.99},
	}
	for _, c := range cases {
		// The pair as the 2nd and 3rd axes of a 3-D Gaussian: the ellipse
		// is that of the pair's marginal.
		a, b := 0.3*math.Sqrt(5*c.sxx), -0.2*math.Sqrt(5*c.syy)
		cov := sym(3, 5, a, b, a, c.sxx, c.sxy, b, c.sxy, c.syy)
		p := prepare(t, Gaussian{Mean: []float64{7, c.mx, c.my}, Cov: cov})
		pts := p.Ellipse(1, 2, c.mass, 64)
		if len(pts) != 65 || pts[0] != pts[64] {
			t.Fatalf("%s: %d points, not closed", c.name, len(pts))
		}
		// The radius: P(R <= r) = 1 - exp(-r^2/2) for the chi-square with 2
		// degrees of freedom (closed form); the distance with gonum's
		// Cholesky inverse of the 2x2 block.
		r := math.Sqrt(-2 * math.Log(1-c.mass))
		var chol mat.Cholesky
		if !chol.Factorize(sym(2, c.sxx, c.sxy, c.sxy, c.syy)) {
			t.Fatalf("%s: not positive definite", c.name)
		}
		var inv mat.SymDense
		if err := chol.InverseTo(&inv); err != nil {
			t.Fatal(err)
		}
		for _, q := range pts {
			d := mat.NewVecDense(2, []float64{q[0] - c.mx, q[1] - c.my})
			if m := math.Sqrt(mat.Inner(d, &inv, d)); math.Abs(m-r) > 1e-9*r {
				t.Errorf("%s: point %v at radius %g, want %g", c.name, q, m, r)
			}
		}
	}
	p := prepare(t, Gaussian{Mean: []float64{0, 0}, Cov: sym(2, 1, 0, 0, 1)})
	if p.Ellipse(0, 1, 1, 32) != nil || p.Ellipse(0, 1, 0.5, 2) != nil {
		t.Error("an ellipse for mass 1 or two points")
	}
}

func TestMassRadius(t *testing.T) {
	// Closed form of the chi-square distribution with 2 degrees of freedom:
	// P(R <= r) = 1 - exp(-r^2/2), so 39.35 %, 86.47 % and 98.89 % of the
	// mass lie within 1, 2 and 3 Mahalanobis units.
	for r := 1.0; r <= 3; r++ {
		p := 1 - math.Exp(-r*r/2)
		if got := MassRadius(p); math.Abs(got-r) > 1e-12 {
			t.Errorf("MassRadius(%g) = %g, want %g", p, got, r)
		}
	}
}

func TestMomentsAndInterval(t *testing.T) {
	// sd and correlation from the covariance (definitions); the central
	// 95 % interval mean ± 1.959963984540054 sd (A&S Table 26.1, digits
	// from memory).
	g := Gaussian{Mean: []float64{1, -2}, Cov: sym(2, 4, 1.2, 1.2, 1)}
	if sd := g.SD(); sd[0] != 2 || sd[1] != 1 {
		t.Errorf("sd %v", sd)
	}
	if c := g.Corr().At(0, 1); math.Abs(c-0.6) > 1e-15 {
		t.Errorf("corr %g, want 0.6", c)
	}
	iv := g.Interval(0, 0.95)
	if z := 1.959963984540054; math.Abs(iv[0]-(1-2*z)) > 1e-12 || math.Abs(iv[1]-(1+2*z)) > 1e-12 {
		t.Errorf("interval %v", iv)
	}
	// And against gonum's distuv.Normal quantiles.
	n := distuv.Normal{Mu: -2, Sigma: 1}
	if iv := g.Interval(1, 0.9); !scalar.EqualWithinAbs(iv[0], n.Quantile(0.05), 1e-12) || !scalar.EqualWithinAbs(iv[1], n.Quantile(0.95), 1e-12) {
		t.Errorf("90 %% interval %v, distuv [%v, %v]", iv, n.Quantile(0.05), n.Quantile(0.95))
	}
	if r := Rows(g.Cov); r[0][1] != 1.2 || r[1][0] != 1.2 || r[1][1] != 1 {
		t.Errorf("rows %v", r)
	}
}

// A covariance on scales far apart is not degenerate; one with a
// correlation of exactly 1 is (definition of a singular matrix).
func TestDegenerate(t *testing.T) {
	prep := func(c ...float64) error {
		_, err := Prepare(Gaussian{Mean: []float64{0, 0}, Cov: sym(2, c...)})
		return err
	}
	if err := prep(1e-16, 0, 0, 1e16); err != nil {
		t.Errorf("sds 1e-8 and 1e8: %v", err)
	}
	if err := prep(1e-16, 1e-16*(1-1e-9), 1e-16*(1-1e-9), 1e-16); err != nil {
		t.Errorf("correlation 1 - 1e-9: %v", err)
	}
	if err := prep(4, 2e8, 2e8, 1e16); err == nil {
		t.Error("correlation 1 passed")
	}
}

// Mahalanobis2Points gives Mahalanobis2's values to the last bit in 1 to 4
// dimensions, and both are the quadratic form with gonum's inverse (an
// independent computation) to 1e-12.
func TestMahalanobis2Points(t *testing.T) {
	covs := []*mat.SymDense{
		sym(1, 2.5),
		sym(2, 1, 0.3, 0.3, 2),
		cov3,
		sym(4,
			1.0, 0.9, 0.2, -0.1,
			0.9, 1.2, 0.3, 0.0,
			0.2, 0.3, 0.7, 0.25,
			-0.1, 0.0, 0.25, 3.0),
	}
	for _, c := range covs {
		d := c.SymmetricDim()
		mean := make([]float64, d)
		for k := range mean {
			mean[k] = 0.5*float64(k) - 0.7
		}
		p := prepare(t, Gaussian{Mean: mean, Cov: c})
		var inv mat.Dense
		if err := inv.Inverse(c); err != nil {
			t.Fatal(err)
		}
		const n = 25
		xs := make([]float64, n*d)
		for i := range xs {
			xs[i] = math.Sin(float64(3*i+1)) * 4
		}
		out := make([]float64, n)
		p.Mahalanobis2Points(xs, out)
		for i := 0; i < n; i++ {
			x := xs[i*d : (i+1)*d]
			if got, one := out[i], p.Mahalanobis2(x); got != one {
				t.Errorf("d %d, point %d: %v, Mahalanobis2 %v", d, i, got, one)
			}
			r := make([]float64, d)
			for k := range r {
				r[k] = x[k] - mean[k]
			}
			v := mat.NewVecDense(d, r)
			if want := mat.Inner(v, &inv, v); !scalar.EqualWithinAbsOrRel(out[i], want, 1e-12, 1e-12) {
				t.Errorf("d %d, point %d: %v, quadratic form %v", d, i, out[i], want)
			}
		}
	}
}
