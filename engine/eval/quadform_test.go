package eval

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// lsqCase is a weighted least-squares model over data: S(s) = sum_i w_i v_i^2
// with v_i = y_i - sum_j x_j[i] s_j, written in one of the model forms
// (form), whose log-density is alpha S + konst.
type lsqCase struct {
	name string
	y    []float64
	xs   [][]float64
	w    []float64 // nil: 1; for form "sdvec" the sds
	form string    // "plain", "weighted", "sdvec"
}

// src writes the model: parameters p1..pm.
func (c lsqCase) src() string {
	var b strings.Builder
	fmt.Fprintf(&b, "y = %s\n", vectorLiteral(c.y))
	for j, x := range c.xs {
		fmt.Fprintf(&b, "x%d = %s\n", j+1, vectorLiteral(x))
	}
	if c.w != nil {
		fmt.Fprintf(&b, "w = %s\n", vectorLiteral(c.w))
	}
	var terms []string
	for j := range c.xs {
		fmt.Fprintf(&b, "param p%d\n", j+1)
		terms = append(terms, fmt.Sprintf("p%d*x%d", j+1, j+1))
	}
	mu := strings.Join(terms, " + ")
	switch c.form {
	case "plain":
		fmt.Fprintf(&b, "sum((y - %s)^2)\n", strings.Join(terms, " - "))
	case "weighted":
		fmt.Fprintf(&b, "sum(w*(y - (%s))^2)\n", mu)
	case "sdvec":
		fmt.Fprintf(&b, "sum(ld_normal(y, %s, w))\n", mu)
	}
	return b.String()
}

// weights returns w_i, alpha and the constant of the log-density.
func (c lsqCase) weights() (w []float64, alpha, konst float64) {
	n := len(c.y)
	w = make([]float64, n)
	alpha = 1
	for i := range w {
		w[i] = 1
		switch c.form {
		case "weighted":
			w[i] = c.w[i]
		case "sdvec":
			w[i] = 1 / (c.w[i] * c.w[i])
			konst -= math.Log(c.w[i]) + halfLog2Pi
		}
	}
	if c.form == "sdvec" {
		alpha = -0.5
	}
	return w, alpha, konst
}

// direct computes the log-density, its gradient and Hessian in Go with
// compensated sums, and the error bounds of a correct evaluation in double
// precision: forming v_i costs at most m+1 roundings, each within eps of
// scale_i = |y_i| + sum_j |x_j[i] s_j| (in the direct evaluation as in
// forming the residual r0 of the quadratic form), which moves S by at most
// 2 sum w_i |v_i| (m+1) eps scale_i; the sums add (n+m) eps of the sum of
// their absolute terms (recursive summation, Higham's gamma_n); and the
// quadratic form's factors of X, backward stable to a small multiple of
// eps ||X||_F, move S by that times ||X||_F |delta|^2 with delta = s - beta0
// (beta0 here from gonum's QR least squares, independent of the SVD the
// compiler uses). Each bound has a safety factor of 8.
func (c lsqCase) direct(s []float64) (v float64, g []float64, h [][]float64, tv float64, tg []float64, th float64) {
	const eps = 0x1p-52
	n, m := len(c.y), len(c.xs)
	w, alpha, konst := c.weights()
	terms := make([]float64, n)
	gt := make([][]float64, m)
	for j := range gt {
		gt[j] = make([]float64, n)
	}
	var sAbsV, sV2, F float64
	sAbsX := make([]float64, m)
	sAbsXV := make([]float64, m)
	for i := 0; i < n; i++ {
		r := c.y[i]
		scale := math.Abs(c.y[i])
		for j := 0; j < m; j++ {
			r -= c.xs[j][i] * s[j]
			scale += math.Abs(c.xs[j][i] * s[j])
		}
		terms[i] = w[i] * r * r
		sAbsV += w[i] * math.Abs(r) * scale
		sV2 += w[i] * r * r
		for j := 0; j < m; j++ {
			gt[j][i] = -2 * w[i] * r * c.xs[j][i]
			sAbsX[j] += w[i] * math.Abs(c.xs[j][i]) * scale
			sAbsXV[j] += w[i] * math.Abs(c.xs[j][i]*r)
			F += w[i] * c.xs[j][i] * c.xs[j][i]
		}
	}
	// beta0 by QR least squares of sqrt(w) X beta = sqrt(w) y.
	X := mat.NewDense(n, m, nil)
	yv := mat.NewVecDense(n, nil)
	for i := 0; i < n; i++ {
		sw := math.Sqrt(w[i])
		yv.SetVec(i, sw*c.y[i])
		for j := 0; j < m; j++ {
			X.Set(i, j, sw*c.xs[j][i])
		}
	}
	var delta2 float64
	var beta mat.VecDense
	if n >= m && beta.SolveVec(X, yv) == nil {
		for j := 0; j < m; j++ {
			d := s[j] - beta.AtVec(j)
			delta2 += d * d
		}
	} else {
		for j := 0; j < m; j++ {
			delta2 += s[j] * s[j]
		}
	}
	k := float64(n + m)
	v = alpha*constSum(terms) + konst
	tv = 8 * eps * math.Abs(alpha) * (2*float64(m+1)*sAbsV + k*sV2 + float64(m)*F*delta2)
	tv += 8 * eps * k * math.Abs(konst)
	g = make([]float64, m)
	tg = make([]float64, m)
	h = make([][]float64, m)
	for j := 0; j < m; j++ {
		g[j] = alpha * constSum(gt[j])
		tg[j] = 16 * eps * math.Abs(alpha) * (float64(m+1)*sAbsX[j] + k*sAbsXV[j] + float64(m)*F*math.Sqrt(delta2))
		h[j] = make([]float64, m)
		for l := 0; l < m; l++ {
			p := make([]float64, n)
			for i := range p {
				p[i] = 2 * w[i] * c.xs[j][i] * c.xs[l][i]
			}
			h[j][l] = alpha * constSum(p)
		}
	}
	th = 16 * eps * math.Abs(alpha) * k * 2 * F
	return v, g, h, tv, tg, th
}

// check compares the compiled quadratic form with direct, and says whether
// the tape lost its loops.
func (c lsqCase) check(t *testing.T, pts [][]float64) {
	t.Helper()
	src := c.src()
	ev := compileWith(t, src, true, true)
	plain := compileWith(t, src, true, false)
	if len(ev.prog.loops) != 0 {
		t.Errorf("%s: %d loops left\n%s", c.name, len(ev.prog.loops), ev.Tape())
	}
	if len(plain.prog.loops) == 0 {
		t.Errorf("%s: the unrewritten model has no loop (the case tests nothing)", c.name)
	}
	for _, s := range pts {
		want, wg, wh, tv, tg, th := c.direct(s)
		for _, e := range []*Evaluator{ev, plain} {
			label := c.name
			if e == plain {
				label += " (unrewritten)"
			}
			v, g, h := derivs(e, s)
			if !(math.Abs(v-want) <= tv) {
				t.Errorf("%s at %v: %.17g, direct %.17g (error %.3g, bound %.3g)", label, s, v, want, v-want, tv)
			}
			if lv := e.LogDensity(s); lv != v && !(math.Abs(lv-want) <= tv) {
				t.Errorf("%s at %v: LogDensity %.17g, direct %.17g", label, s, lv, want)
			}
			for j := range g {
				if !(math.Abs(g[j]-wg[j]) <= tg[j]) {
					t.Errorf("%s at %v: gradient[%d] %.17g, direct %.17g (bound %.3g)", label, s, j, g[j], wg[j], tg[j])
				}
				for l := range g {
					if !(math.Abs(h[j][l]-wh[j][l]) <= th) || h[j][l] != h[l][j] {
						t.Errorf("%s at %v: Hessian[%d][%d] %.17g, direct %.17g (bound %.3g)", label, s, j, l, h[j][l], wh[j][l], th)
					}
				}
			}
		}
	}
	blockMatches(t, c.name, ev, pts)
}

func TestQuadraticForms(t *testing.T) {
	r := rand.New(rand.NewPCG(11, 12))
	noise := func(n int, sd float64) []float64 {
		v := make([]float64, n)
		for i := range v {
			v[i] = sd * r.NormFloat64()
		}
		return v
	}
	grid := func(n int, lo, hi float64) []float64 {
		v := make([]float64, n)
		for i := range v {
			v[i] = lo + (hi-lo)*float64(i)/float64(max(n-1, 1))
		}
		return v
	}
	ones := func(n int) []float64 { return fillVec(1, n) }
	sq := func(u []float64) []float64 {
		v := make([]float64, len(u))
		for i, x := range u {
			v[i] = x * x
		}
		return v
	}
	add := func(a []float64, f func(i int) float64) []float64 {
		v := make([]float64, len(a))
		for i := range v {
			v[i] = a[i] + f(i)
		}
		return v
	}
	// The sensor of testdata/reference/bench: offset, gain, drift.
	u := []float64{0, 0.5, 1, 1.5, 2, 2.5, 3, 3.5}
	sensor := lsqCase{name: "sensor", y: []float64{0.11, 0.62, 1.08, 1.71, 2.15, 2.74, 3.36, 3.82},
		xs: [][]float64{ones(8), u, sq(u)}, form: "plain"}
	sensor.check(t, [][]float64{{0.1, 1, 0.02}, {-0.5, 1.4, -0.1}, {3, -2, 0.5}})

	// Data 1e6 + 2t + noise: the offset near 1e6. A naive expansion
	// sum(y^2) - 2 sum(y (a + b t)) + ... loses everything to cancellation;
	// the bound rejects it (checked below).
	t50 := grid(50, 0, 1)
	n50 := noise(50, 0.1)
	big := lsqCase{name: "offset 1e6", y: add(t50, func(i int) float64 { return 1e6 + t50[i] + n50[i] }),
		xs: [][]float64{ones(50), t50}, form: "plain"}
	bigPts := [][]float64{{1e6, 2}, {1e6 + 0.03, 1.95}, {999999.5, 3}}
	big.check(t, bigPts)
	for _, s := range bigPts {
		want, _, _, tv, _, _ := big.direct(s)
		var sy2, sy, sty, st, st2 float64
		for i, y := range big.y {
			sy2 += y * y
			sy += y
			sty += t50[i] * y
			st += t50[i]
			st2 += t50[i] * t50[i]
		}
		a, b := s[0], s[1]
		naive := sy2 - 2*a*sy - 2*b*sty + 50*a*a + 2*a*b*st + b*b*st2
		if math.Abs(naive-want) <= tv {
			t.Errorf("the naive expansion at %v is within the bound (%.3g of %.3g): the test cannot tell", s, naive-want, tv)
		}
	}

	// Columns 1 and t with t near 1e3 (nearly collinear, condition ~1e6).
	t40 := grid(40, 1000, 1001)
	n40 := noise(40, 0.05)
	collinear := lsqCase{name: "t near 1e3", y: add(t40, func(i int) float64 { return 3 - 0.5*t40[i] + n40[i] }),
		xs: [][]float64{ones(40), t40}, form: "plain"}
	collinear.check(t, [][]float64{{3, 0.5}, {2.9, 0.5001}, {-10, 0.52}})

	// Weights and data sds.
	t30 := grid(30, -2, 2)
	w30 := add(make([]float64, 30), func(i int) float64 { return 0.5 + r.Float64() })
	y30 := add(t30, func(i int) float64 { return 1 + 0.3*t30[i]*t30[i] + 0.2*r.NormFloat64() })
	lsqCase{name: "weighted", y: y30, xs: [][]float64{ones(30), t30, sq(t30)}, w: w30, form: "weighted"}.
		check(t, [][]float64{{1, 0, 0.3}, {0.5, 0.2, 0.1}})
	lsqCase{name: "sd vector", y: y30, xs: [][]float64{ones(30), t30}, w: w30, form: "sdvec"}.
		check(t, [][]float64{{1, 0.4}, {-2, 3}})

	// Rank deficient (x3 = 2 x2) and fewer data than terms.
	lsqCase{name: "rank deficient", y: y30, xs: [][]float64{ones(30), t30, add(t30, func(i int) float64 { return t30[i] })}, form: "plain"}.
		check(t, [][]float64{{1, 0.2, 0.1}, {0, 1, -1}})
	lsqCase{name: "two data, three terms", y: []float64{1.5, -0.2}, xs: [][]float64{{1, 1}, {0.3, 2}, {5, -1}}, form: "plain"}.
		check(t, [][]float64{{1, 0.2, 0.1}, {0, 1, -1}})
}

func TestQuadraticFormsOfExpressions(t *testing.T) {
	// Terms whose scalars are expressions of the parameters, and a
	// normal likelihood with the sd a parameter: no loop, and value,
	// gradient and Hessian as the unexpanded sums (which other tests check
	// against hyperdual numbers and gonum's distuv).
	y := []float64{0.3, 1.2, 2.5, 0.8, 4.1, 1.9, 0.05, 3.3, 2.2, 1.7}
	tt := []float64{0.1, 0.5, 1.2, 0.3, 2.0, 0.9, 0.0, 1.6, 1.1, 0.8}
	data := "y = " + vectorLiteral(y) + "\nt = " + vectorLiteral(tt) + "\n"
	cases := []string{
		"param a\nparam b\nsum((y - exp(a)*t - a*b)^2) - a^2",
		"param a\nparam b\nparam s\nsum(ld_normal(y, a + b*t, s)) + ld_normal(s, 1, 1)",
		"param a\nparam b\nparam s\nsum(ld_normal(y, a + b*t, exp(s)))",
		"param a\nparam b\nsum(ld_lognormal(y + 1, a*t, exp(b)))",
		"param a\nparam b\nmean((2*(y - a) - t/b)^2) + sum(((y - a*t)/3)^2)",
	}
	for _, c := range cases {
		src := data + c
		ev := compileWith(t, src, true, true)
		plain := compileWith(t, src, true, false)
		if len(ev.prog.loops) != 0 || len(plain.prog.loops) == 0 {
			t.Errorf("%s: %d loops (unrewritten %d), want 0\n%s", c, len(ev.prog.loops), len(plain.prog.loops), ev.Tape())
		}
		for _, x := range [][]float64{{0.4, 1.3, 0.8}, {-0.2, 0.7, 1.5}, {1.1, -0.4, 0.6}} {
			x = x[:ev.Dim()]
			sameDerivs(t, c, ev, plain, x, 1e-11)
			fdCheck(t, c, ev, x, 1e-6)
		}
	}
}

func TestRandomQuadraticForms(t *testing.T) {
	// Random least-squares models: 1 to 60 data, 1 to 4 terms, columns
	// and data of random scales and offsets (up to 1e6), in the three
	// forms, at points near and away from the fit: against direct sums
	// within the error bounds of lsqCase.direct.
	r := rand.New(rand.NewPCG(21, 22))
	for trial := 0; trial < 150; trial++ {
		n := 1 + r.IntN(60)
		m := 1 + r.IntN(4)
		xs := make([][]float64, m)
		truth := make([]float64, m)
		for j := range xs {
			xs[j] = make([]float64, n)
			scale := math.Pow(10, 4*r.Float64()-2)
			off := 0.0
			if r.IntN(3) == 0 {
				off = math.Pow(10, 6*r.Float64()) * scale
			}
			for i := range xs[j] {
				xs[j][i] = off + scale*r.NormFloat64()
			}
			if j == 0 && r.IntN(2) == 0 {
				xs[j] = fillVec(1, n) // an intercept
			}
			truth[j] = r.NormFloat64() * 3
		}
		y := make([]float64, n)
		base := 0.0
		if r.IntN(3) == 0 {
			base = 1e6
		}
		for i := range y {
			y[i] = base + r.NormFloat64()
			for j := range xs {
				y[i] += xs[j][i] * truth[j]
			}
		}
		c := lsqCase{name: fmt.Sprintf("trial %d (n %d, m %d)", trial, n, m), y: y, xs: xs,
			form: []string{"plain", "weighted", "sdvec"}[trial%3]}
		if c.form != "plain" {
			c.w = make([]float64, n)
			for i := range c.w {
				c.w[i] = 0.2 + r.Float64()
			}
		}
		pts := [][]float64{truth, make([]float64, m)}
		for j := range truth {
			pts[1][j] = truth[j] + 0.1*r.NormFloat64()
		}
		c.check(t, pts)
	}
}
