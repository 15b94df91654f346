package eval

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// compileWith compiles src with the algebraic rewrites and the quadratic
// forms on or off.
func compileWith(t testing.TB, src string, algebra, quadratic bool) *Evaluator {
	t.Helper()
	rewriteAlgebra, rewriteQuadratic = algebra, quadratic
	defer func() { rewriteAlgebra, rewriteQuadratic = true, true }()
	return compileSrc(t, src)
}

// tapeOps counts the operations of the scalar tape, of the loops' value
// and derivative kernels, and of the block tape.
func tapeOps(p *program) map[opcode]int {
	n := map[opcode]int{}
	for _, in := range p.code {
		n[in.op]++
	}
	for _, lp := range p.loops {
		for _, in := range lp.kern {
			n[in.op]++
		}
		for _, in := range lp.jkern {
			n[in.op]++
		}
	}
	if p.block != nil {
		for _, in := range p.block.kern {
			n[in.op]++
		}
	}
	return n
}

// sameDerivs compares value, gradient and Hessian of two evaluators at x
// to a relative tolerance (of the largest entry, at least 1).
func sameDerivs(t *testing.T, label string, got, want *Evaluator, x []float64, tol float64) {
	t.Helper()
	v1, g1, h1 := derivs(got, x)
	v2, g2, h2 := derivs(want, x)
	if !near(v1, v2, tol, 1) {
		t.Errorf("%s at %v: value %.17g, unrewritten %.17g", label, x, v1, v2)
	}
	sg, sh := 1.0, 1.0
	for i := range g2 {
		sg = math.Max(sg, math.Abs(g2[i]))
		for j := range g2 {
			sh = math.Max(sh, math.Abs(h2[i][j]))
		}
	}
	for i := range g2 {
		if !near(g1[i], g2[i], tol, sg) {
			t.Errorf("%s at %v: gradient[%d] %.17g, unrewritten %.17g", label, x, i, g1[i], g2[i])
		}
		for j := range g2 {
			if !near(h1[i][j], h2[i][j], tol, sh) {
				t.Errorf("%s at %v: Hessian[%d][%d] %.17g, unrewritten %.17g", label, x, i, j, h1[i][j], h2[i][j])
			}
		}
	}
}

func TestRewritesRemoveTranscendentals(t *testing.T) {
	// Each rewrite: the tape loses the named operations, and in the bulk
	// (where the unrewritten form is accurate) value, gradient and Hessian
	// agree with the unrewritten form and with finite differences.
	cases := []struct {
		src    string
		absent []opcode
	}{
		{"param x\nlog(exp(x)) - x^2/2", []opcode{opLog, opExp}},
		{"param x\nlog(exp(2*x - 1))^2 - exp(x)", []opcode{opLog}},
		{"param x\nlog1p(expm1(x)) - x^2", []opcode{opLog1p, opExpm1}},
		{"param x\nlog(logistic(x)) - x^2/8", []opcode{opLog, opLogistic}},
		{"param x\nlog(1 - logistic(x)) - x^2/8", []opcode{opLog, opLogistic, opSubKR}},
		{"param x\nlog1p(-logistic(x)) - x^2/8", []opcode{opLog1p, opLogistic}},
		{"param x\nparam y\nlog(logistic(x*y)) + log(1 - logistic(x - y)) - x^2 - y^2", []opcode{opLog, opLogistic}},
		{"param x\nld_poisson(4, exp(x))", []opcode{opLog, opXlogy, opGuardGE}},
		{"param x\nld_binomial(3, 10, logistic(x))", []opcode{opLog, opLog1p, opXlogy, opXlog1py, opLogistic, opGuardGE, opGuardLE}},
		{"param x\nld_exponential(2, exp(x))", []opcode{opLog, opGuardGT}},
		{"param x\nparam y\nld_gamma(1.5, exp(y), exp(x))", []opcode{opLog}},
	}
	for _, c := range cases {
		ev := compileWith(t, c.src, true, true)
		plain := compileWith(t, c.src, false, false)
		cnt, before := tapeOps(ev.prog), tapeOps(plain.prog)
		removed := 0
		for _, op := range c.absent {
			if cnt[op] != 0 {
				t.Errorf("%q: %d %s left on the tape\n%s", c.src, cnt[op], op.name(), ev.Tape())
			}
			removed += before[op]
		}
		if removed == 0 {
			t.Errorf("%q: the unrewritten tape has none of the operations (the case tests nothing)", c.src)
		}
		for _, x0 := range []float64{-3, -0.7, 0.1, 0.4, 2.5} {
			x := []float64{x0}
			if ev.Dim() == 2 {
				x = []float64{x0, 0.3 - x0/2}
			}
			sameDerivs(t, c.src, ev, plain, x, 1e-12)
			fdCheck(t, c.src, ev, x, 1e-6)
		}
	}
}

func (op opcode) name() string { return ops[op].name }

func TestRewritesInTheTails(t *testing.T) {
	// Where the unrewritten forms overflow, underflow or round to 1, the
	// rewritten ones keep the value. References: log(1 + e^x) = x +
	// log(1 + e^-x), and log(1 + u) = u - u^2/2 + ... for small u (calculus,
	// from memory), so log(logistic(x)) = -log(1 + e^-x) is -e^-x to double
	// precision for x >= 40 and x for x <= -40.
	cases := []struct {
		src   string
		x     float64
		want  float64
		plain float64 // what the unrewritten form gives
	}{
		{"param x\nlog(exp(x))", 800, 800, math.Inf(1)},
		{"param x\nlog(exp(x))", -800, -800, math.Inf(-1)},
		{"param x\nlog(logistic(x))", -800, -800, math.Inf(-1)},
		{"param x\nlog(logistic(x))", 40, -math.Exp(-40), 0},
		{"param x\nlog(1 - logistic(x))", 40, -40, math.Inf(-1)},
		{"param x\nlog(1 - logistic(x))", -40, -math.Exp(-40), 0},
		{"param x\nlog1p(-logistic(x))", 50, -50, math.Inf(-1)},
		// An exponential with rate e^-800: log p = -800 - 2 e^-800; the
		// rate underflows to 0 and the unrewritten guard says -Inf.
		{"param x\nld_exponential(2, exp(x))", -800, -800, math.Inf(-1)},
		// A binomial at eta = 50: 3 log p + 7 log(1-p) = -3 e^-50 - 7 (50 + e^-50).
		{"param x\nld_binomial(3, 10, logistic(x))", 50, lchoose(10, 3) - 3*math.Exp(-50) - 7*(50+math.Exp(-50)), math.Inf(-1)},
	}
	for _, c := range cases {
		ev := compileWith(t, c.src, true, true)
		plain := compileWith(t, c.src, false, false)
		if got := ev.LogDensity([]float64{c.x}); !near(got, c.want, 1e-15, 0) {
			t.Errorf("%q at %v = %.17g, want %.17g", c.src, c.x, got, c.want)
		}
		if got := plain.LogDensity([]float64{c.x}); !near(got, c.plain, 1e-15, 0) {
			t.Errorf("%q unrewritten at %v = %.17g, expected %.17g (the case shows no gain)", c.src, c.x, got, c.plain)
		}
	}
}

// lchoose is log(n choose k) from math.Lgamma.
func lchoose(n, k float64) float64 {
	a, _ := math.Lgamma(n + 1)
	b, _ := math.Lgamma(k + 1)
	c, _ := math.Lgamma(n - k + 1)
	return a - b - c
}

func TestBinomLogitAgainstGonum(t *testing.T) {
	// opBinomLogit + log(n choose k) is the binomial log-probability of k
	// in n with p = logistic(eta): gonum's distuv.Binomial. Its derivatives
	// in eta are k - n p and -n p (1 - p) (differentiating k eta -
	// n log(1 + e^eta), from memory).
	for _, eta := range []float64{-12, -3.5, -0.4, 0, 0.7, 2, 9} {
		p := logistic(eta)
		for _, kn := range [][2]float64{{0, 12}, {1, 12}, {6, 12}, {12, 12}, {3, 5}, {0, 0}} {
			k, n := kn[0], kn[1]
			want := distuv.Binomial{N: n, P: p}.LogProb(k)
			if n == 0 {
				want = 0
			}
			f, f1, f2 := binomLogitPartials(eta, k, n-k)
			if v := binomLogit(eta, k, n-k); v != f {
				t.Errorf("binomLogit(%v, %v, %v) = %v, partials give %v", eta, k, n-k, v, f)
			}
			if got := f + lchoose(n, k); !near(got, want, 1e-12, 1) {
				t.Errorf("k=%v n=%v eta=%v: %.17g, gonum distuv.Binomial %.17g", k, n, eta, got, want)
			}
			if !near(f1, k-n*p, 1e-13, math.Max(k, n)) || !near(f2, -n*p*(1-p), 1e-13, n*p) {
				t.Errorf("k=%v n=%v eta=%v: derivatives %v %v, want %v %v", k, n, eta, f1, f2, k-n*p, -n*p*(1-p))
			}
		}
	}
	// Zero counts contribute 0 at infinite eta; NaN stays NaN.
	if v := binomLogit(math.Inf(1), 3, 0); v != 0 {
		t.Errorf("binomLogit(+Inf, 3, 0) = %v, want 0", v)
	}
	if v := binomLogit(math.Inf(-1), 0, 3); v != 0 {
		t.Errorf("binomLogit(-Inf, 0, 3) = %v, want 0", v)
	}
	if v := binomLogit(math.Inf(1), 3, 1); !math.IsInf(v, -1) {
		t.Errorf("binomLogit(+Inf, 3, 1) = %v, want -Inf", v)
	}
	if v := binomLogit(math.NaN(), 0, 0); !math.IsNaN(v) {
		t.Errorf("binomLogit(NaN, 0, 0) = %v, want NaN", v)
	}
}

func TestRewriteCountModels(t *testing.T) {
	// A Poisson regression with a log link and a binomial dose-response
	// with a logit link over data: the loop keeps one exp per element (and
	// for the binomial nothing else transcendental: one opBinomLogit), no
	// logs and no guards; k log(rate) = k eta is summed at compile time.
	// Values against gonum's distuv, derivatives against the unrewritten
	// form and finite differences.
	u := []float64{-1, -1, 0, 0, 1, 1, 2, 0.5}
	k := []float64{0, 2, 3, 5, 9, 12, 20, 4}
	dose := []float64{0.5, 1, 2, 4, 8}
	kb := []float64{0, 3, 6, 9, 12}
	nb := []float64{12, 12, 12, 12, 12}
	pois := "u = " + vectorLiteral(u) + "\nk = " + vectorLiteral(k) + "\nparam a\nparam b\n" +
		"sum(ld_poisson(k, exp(a + b*u)))\n"
	binom := "dose = " + vectorLiteral(dose) + "\nk = " + vectorLiteral(kb) + "\nn = " + vectorLiteral(nb) +
		"\nparam a\nparam b\nsum(ld_binomial(k, n, logistic(a + b*log(dose))))\n"
	cases := []struct {
		src     string
		kernel  map[opcode]int // operations the value kernel must have, and how many
		refData func(x []float64) float64
	}{
		{pois, map[opcode]int{opExp: 1, opLog: 0, opXlogy: 0, opGuardGE: 0, opLgamma: 0}, func(x []float64) float64 {
			var s float64
			for i := range u {
				s += distuv.Poisson{Lambda: math.Exp(x[0] + x[1]*u[i])}.LogProb(k[i])
			}
			return s
		}},
		{binom, map[opcode]int{opBinomLogit: 1, opLogistic: 0, opXlogy: 0, opXlog1py: 0, opGuardGE: 0, opGuardLE: 0, opLog: 0}, func(x []float64) float64 {
			var s float64
			for i := range dose {
				s += distuv.Binomial{N: nb[i], P: logistic(x[0] + x[1]*math.Log(dose[i]))}.LogProb(kb[i])
			}
			return s
		}},
	}
	for _, c := range cases {
		ev := compileWith(t, c.src, true, true)
		plain := compileWith(t, c.src, false, false)
		if len(ev.prog.loops) != 1 {
			t.Fatalf("%s: %d loops, want 1\n%s", c.src, len(ev.prog.loops), ev.Tape())
		}
		got := map[opcode]int{}
		for _, in := range ev.prog.loops[0].kern {
			got[in.op]++
		}
		for op, n := range c.kernel {
			if got[op] != n {
				t.Errorf("%s: the kernel has %d %s, want %d\n%s", c.src, got[op], op.name(), n, ev.Tape())
			}
		}
		for _, x := range [][]float64{{0.5, 0.8}, {-1, 1.5}, {1.7, -0.3}, {0, 0}} {
			if v, want := ev.LogDensity(x), c.refData(x); !near(v, want, 1e-12, 1) {
				t.Errorf("%s at %v = %.17g, gonum distuv %.17g", c.src, x, v, want)
			}
			sameDerivs(t, c.src, ev, plain, x, 1e-12)
			fdCheck(t, c.src, ev, x, 1e-6)
		}
	}
	// The support guards stay where they may fail: a rate or probability
	// that is a parameter.
	for _, c := range []struct {
		src string
		x   []float64
	}{
		{"param r\nld_poisson(3, r)", []float64{-0.5}},
		{"param p\nld_binomial(3, 10, p)", []float64{1.1}},
		{"param p\nld_binomial(3, 10, p)", []float64{-0.1}},
		{"param s\nld_normal(1, 0, exp(s))", []float64{-800}}, // sd underflows: kept
	} {
		ev := compileWith(t, c.src, true, true)
		if v := ev.LogDensity(c.x); !math.IsInf(v, -1) {
			t.Errorf("%q at %v = %v, want -Inf", c.src, c.x, v)
		}
	}
}

func TestRandomCountModels(t *testing.T) {
	// Random Poisson (log link), binomial and hand-written Bernoulli
	// (logit link) regressions over random data: the rewritten tape
	// against gonum's distuv and the unrewritten tape (value, gradient,
	// Hessian), where the linear predictor is moderate (|eta| < 15, where
	// the unrewritten form is accurate).
	r := rand.New(rand.NewPCG(31, 32))
	compared := 0
	for trial := 0; trial < 60; trial++ {
		n := 1 + r.IntN(40)
		m := 1 + r.IntN(3)
		xs := make([][]float64, m)
		src := ""
		var terms []string
		for j := range xs {
			xs[j] = make([]float64, n)
			for i := range xs[j] {
				xs[j][i] = math.Round(r.NormFloat64()*100) / 100
			}
			src += fmt.Sprintf("x%d = %s\nparam p%d\n", j+1, vectorLiteral(xs[j]), j+1)
			terms = append(terms, fmt.Sprintf("p%d*x%d", j+1, j+1))
		}
		eta := strings.Join(terms, " + ")
		k := make([]float64, n)
		size := make([]float64, n)
		for i := range k {
			size[i] = float64(1 + r.IntN(20))
			k[i] = float64(r.IntN(int(size[i]) + 1))
		}
		kind := trial % 3
		switch kind {
		case 0:
			src += "k = " + vectorLiteral(k) + "\nsum(ld_poisson(k, exp(" + eta + ")))\n"
		case 1:
			src += "k = " + vectorLiteral(k) + "\nn = " + vectorLiteral(size) + "\nsum(ld_binomial(k, n, logistic(" + eta + ")))\n"
		case 2:
			for i := range k {
				k[i] = float64(r.IntN(2))
				size[i] = 1
			}
			src += "y = " + vectorLiteral(k) + "\np = logistic(" + eta + ")\nsum(y*log(p) + (1 - y)*log(1 - p))\n"
		}
		ev := compileWith(t, src, true, true)
		plain := compileWith(t, src, false, false)
		if ops := tapeOps(ev.prog); ops[opLog]+ops[opXlogy]+ops[opXlog1py]+ops[opLogistic] != 0 {
			t.Errorf("%s: logs left on the tape\n%s", src, ev.Tape())
		}
		x := make([]float64, m)
		for j := range x {
			x[j] = r.NormFloat64()
		}
		want := 0.0
		moderate := true
		for i := 0; i < n; i++ {
			e := 0.0
			for j := range x {
				e += x[j] * xs[j][i]
			}
			moderate = moderate && math.Abs(e) < 15
			switch kind {
			case 0:
				want += distuv.Poisson{Lambda: math.Exp(e)}.LogProb(k[i])
			default:
				want += distuv.Binomial{N: size[i], P: logistic(e)}.LogProb(k[i])
			}
		}
		// (The Bernoulli's log(n choose k) is 0: distuv with N = 1.)
		if got := ev.LogDensity(x); moderate && !near(got, want, 1e-11, 1) {
			t.Errorf("%s at %v = %.17g, gonum distuv %.17g", src, x, got, want)
		}
		if moderate {
			sameDerivs(t, src, ev, plain, x, 1e-10)
			compared++
		}
		pts := [][]float64{x}
		for p := 0; p < 40; p++ {
			y := make([]float64, m)
			for j := range y {
				y[j] = 2 * r.NormFloat64()
			}
			pts = append(pts, y)
		}
		blockMatches(t, src, ev, pts)
	}
	if compared < 40 {
		t.Errorf("only %d of 60 random count models compared", compared)
	}
}
