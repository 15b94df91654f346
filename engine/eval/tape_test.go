package eval

import (
	"math"
	"strconv"
	"strings"
	"testing"

	"bellcheck/engine/model"
)

// kernelLen counts the loops' kernel instructions.
func kernelLen(p *program) int {
	n := 0
	for _, lp := range p.loops {
		n += len(lp.kern)
	}
	return n
}

func TestConstantFolding(t *testing.T) {
	// A parameter-free sum over 200 data points is a constant: no loop is
	// left, and its value is the sum computed at compile time.
	tt := make([]float64, 200)
	var want float64
	for i := range tt {
		tt[i] = float64(i) / 7
		want += tt[i] * tt[i]
	}
	src := "t = " + vectorLiteral(tt) + "\nparam a\n-a^2 * sum(t^2) / 2 + sum(exp(-t)) * a\n"
	ev := compileSrc(t, src)
	if len(ev.prog.loops) != 0 || kernelLen(ev.prog) != 0 {
		t.Errorf("data sums not folded: %d loops\n%s", len(ev.prog.loops), ev.Tape())
	}
	var se float64
	for _, x := range tt {
		se += math.Exp(-x)
	}
	a := 0.3
	if got, w := ev.LogDensity([]float64{a}), -a*a*want/2+se*a; !near(got, w, 1e-14, 1) {
		t.Errorf("value %v, want %v", got, w)
	}
	// Sums of linear terms in the parameters become sums of data times
	// parameters: a Gaussian likelihood written term by term has one loop
	// (for the sum of squares) and its linear parts fold.
	src2 := "t = " + vectorLiteral(tt) + "\nparam a\nparam b\nsum(a*t + b) - sum(3*t/b)\n"
	ev2 := compileSrc(t, src2)
	if len(ev2.prog.loops) != 0 {
		t.Errorf("linear sums not distributed:\n%s", ev2.Tape())
	}
	var st float64
	for _, x := range tt {
		st += x
	}
	if got, w := ev2.LogDensity([]float64{0.5, 2}), 0.5*st+200*2-3*st/2; !near(got, w, 1e-13, 1) {
		t.Errorf("linear sums: %v, want %v", got, w)
	}
	// Parameter-free sub-expressions are evaluated at compile time: the
	// tape of exp(2) * x + (log(3)^2 - sqrt(16)) has two instructions.
	ev3 := compileSrc(t, "param x\nexp(2) * x + (log(3)^2 - sqrt(16))")
	if n := len(ev3.prog.code); n != 2 || ev3.prog.code[0].k != math.Exp(2) || ev3.prog.code[1].k != math.Log(3)*math.Log(3)-4 {
		t.Errorf("exp(2)*x + (log(3)^2 - sqrt(16)): %d instructions, want 2 (mulk, addk)\n%s", n, ev3.Tape())
	}
}

func TestPowersSpecialised(t *testing.T) {
	// x^2, x^3, x^-1, x^0.5 and small integer powers become
	// multiplications, reciprocals and square roots, not calls of pow.
	cases := []struct {
		src  string
		want []opcode
	}{
		{"param x\nx^2", []opcode{opSq}},
		{"param x\nx^3", []opcode{opSq, opMul}},
		{"param x\nx^-1", []opcode{opRecip}},
		{"param x\nx^0.5", []opcode{opSqrt}},
		{"param x\nx^-2", []opcode{opSq, opRecip}},
		{"param x\nx^8", []opcode{opSq, opSq, opSq}},
		{"param x\nx^1.5", []opcode{opPowK}},
		{"param x\n2^x", []opcode{opPowKR}},
		{"param x\nx*x", []opcode{opSq}},
		{"param x\n-x^2/2", []opcode{opSq, opMulK}},
	}
	for _, c := range cases {
		ev := compileSrc(t, c.src)
		var got []opcode
		for _, in := range ev.prog.code {
			got = append(got, in.op)
		}
		if len(got) != len(c.want) {
			t.Errorf("%q: tape %v, want %v\n%s", c.src, got, c.want, ev.Tape())
			continue
		}
		for i := range got {
			if got[i] != c.want[i] {
				t.Errorf("%q: tape %v, want %v\n%s", c.src, got, c.want, ev.Tape())
				break
			}
		}
		// And the value is that of math.Pow.
		x := 1.7
		var want float64
		switch {
		case strings.Contains(c.src, "x*x"):
			want = x * x
		case strings.Contains(c.src, "2^x"):
			want = math.Pow(2, x)
		case strings.Contains(c.src, "-x^2/2"):
			want = -x * x / 2
		default:
			var k float64
			for _, s := range []string{"^-0.5", "^-2", "^-1", "^0.5", "^1.5", "^2", "^3", "^8"} {
				if strings.HasSuffix(c.src, s) {
					k = mustFloat(s[1:])
				}
			}
			want = math.Pow(x, k)
		}
		if got := ev.LogDensity([]float64{x}); !near(got, want, 1e-15, 1) {
			t.Errorf("%q at %v = %v, math.Pow gives %v", c.src, x, got, want)
		}
	}
}

func mustFloat(s string) float64 {
	var v float64
	for _, c := range []struct {
		s string
		v float64
	}{{"-0.5", -0.5}, {"-2", -2}, {"-1", -1}, {"0.5", 0.5}, {"1.5", 1.5}, {"2", 2}, {"3", 3}, {"8", 8}} {
		if c.s == s {
			v = c.v
		}
	}
	return v
}

func TestDefinitionsComputedOnce(t *testing.T) {
	// A definition used three times, and the same sub-expression written
	// twice, are computed once (the tape has one exp).
	ev := compileSrc(t, "param x\nparam y\nu = exp(x*y)\nu + u^2 - log(u) + exp(x*y)")
	n := 0
	for _, in := range ev.prog.code {
		if in.op == opExp {
			n++
		}
	}
	if n != 1 {
		t.Errorf("exp appears %d times, want once\n%s", n, ev.Tape())
	}
	fdCheck(t, "definitions", ev, []float64{0.3, 0.7}, 1e-6)
}

func TestVectorLoops(t *testing.T) {
	// Data vectors longer than a chunk (256 elements, 32 with derivatives),
	// several loops at different levels (a reduction inside a vector
	// expression), and all reductions, against direct sums in Go.
	n := 1000
	tt := make([]float64, n)
	y := make([]float64, n)
	for i := range tt {
		tt[i] = float64(i)/float64(n) - 0.3
		y[i] = math.Sin(float64(3*i)) + 2*tt[i]
	}
	data := "t = " + vectorLiteral(tt) + "\ny = " + vectorLiteral(y) + "\n"
	cases := []struct {
		src   string
		loops int
		ref   func(p []float64) float64
	}{
		{"param a\nparam b\nparam s\n-sum((y - a - b*t)^2)/(2*s^2) - len(y)*log(s)", 1, func(p []float64) float64 {
			var ss float64
			for i := range y {
				r := y[i] - p[0] - p[1]*tt[i]
				ss += r * r
			}
			return -ss/(2*p[2]*p[2]) - float64(n)*math.Log(p[2])
		}},
		{"param a\nparam b\nr = y - a*t\nm = mean(exp(r*b))\nsum((r - m)^2) * b", 2, func(p []float64) float64 {
			var m float64
			for i := range y {
				m += math.Exp((y[i] - p[0]*tt[i]) * p[1])
			}
			m /= float64(n)
			var s float64
			for i := range y {
				d := y[i] - p[0]*tt[i] - m
				s += d * d
			}
			return s * p[1]
		}},
		{"param a\nparam b\nlogsumexp(a*y + b*t^2) - max(a*t) + min(b*y*t)", 1, func(p []float64) float64 {
			m := math.Inf(-1)
			for i := range y {
				m = math.Max(m, p[0]*y[i]+p[1]*tt[i]*tt[i])
			}
			var s float64
			mx, mn := math.Inf(-1), math.Inf(1)
			for i := range y {
				s += math.Exp(p[0]*y[i] + p[1]*tt[i]*tt[i] - m)
				mx = math.Max(mx, p[0]*tt[i])
				mn = math.Min(mn, p[1]*y[i]*tt[i])
			}
			return m + math.Log(s) - mx + mn
		}},
		{"param a\nparam b\nsum(ld_normal(y, a + b*t, exp(b)))", 1, func(p []float64) float64 {
			var s float64
			for i := range y {
				z := (y[i] - p[0] - p[1]*tt[i]) / math.Exp(p[1])
				s += -z*z/2 - p[1] - 0.5*math.Log(2*math.Pi)
			}
			return s
		}},
		{"param a\nparam b\nv = [a, b, a*b, 1, 2]\nsum(exp(v)) + sum(log1pexp(a*t - b))", 1, func(p []float64) float64 {
			s := math.Exp(p[0]) + math.Exp(p[1]) + math.Exp(p[0]*p[1]) + math.E + math.Exp(2)
			for i := range tt {
				s += math.Log1p(math.Exp(p[0]*tt[i] - p[1]))
			}
			return s
		}},
	}
	// Each case with the rewrites (sums of squares of affine expressions
	// become quadratic forms without a loop) and without (the loops this
	// test is about).
	for _, c := range cases {
		for _, rw := range []bool{true, false} {
			rewriteQuadratic = rw
			ev := compileSrc(t, data+c.src)
			rewriteQuadratic = true
			if got := len(ev.prog.loops); !rw && got < c.loops {
				t.Errorf("%s: %d loops, want at least %d\n%s", c.src, got, c.loops, ev.Tape())
			}
			checkVectorLoopCase(t, ev, c.src, c.ref)
		}
	}
}

func checkVectorLoopCase(t *testing.T, ev *Evaluator, src string, ref func([]float64) float64) {
	t.Helper()
	d := ev.Dim()
	pts := [][]float64{{0.4, 1.3, 0.8}, {-0.2, 0.7, 1.5}, {1.1, -0.4, 0.6}}
	for i := range pts {
		pts[i] = pts[i][:d]
		want := ref(pts[i])
		if got := ev.LogDensity(pts[i]); !near(got, want, 1e-12, 1) {
			t.Errorf("%s at %v = %.16g, direct loop %.16g", src, pts[i], got, want)
		}
		v, _, _ := derivs(ev, pts[i])
		if !near(v, want, 1e-12, 1) {
			t.Errorf("%s at %v: value with derivatives %.16g, direct loop %.16g", src, pts[i], v, want)
		}
		fdCheck(t, src[:20], ev, pts[i], 1e-5)
	}
	blockMatches(t, src, ev, pts)
}

func TestBoundsAndForm(t *testing.T) {
	// A declared support: -Inf outside it (closed bounds), NaN for NaN.
	ev := compileSrc(t, "param x in [0, 2]\nparam y in [-inf, 1]\n-x - y^2")
	cases := []struct {
		x    []float64
		want float64
	}{
		{[]float64{1, 0.5}, -1.25},
		{[]float64{0, 1}, -1},
		{[]float64{2, -30}, -902},
		{[]float64{-1e-12, 0}, math.Inf(-1)},
		{[]float64{2.5, 0}, math.Inf(-1)},
		{[]float64{1, 1.01}, math.Inf(-1)},
		{[]float64{math.NaN(), 0}, math.NaN()},
	}
	for _, c := range cases {
		if got := ev.LogDensity(c.x); !near(got, c.want, 1e-15, 1) {
			t.Errorf("at %v = %v, want %v", c.x, got, c.want)
		}
	}
	pts := make([][]float64, len(cases))
	for i := range cases {
		pts[i] = cases[i].x
	}
	blockMatches(t, "bounds", ev, pts)
	// A cost is negated: the evaluator returns the log-density.
	cost := compileSrc(t, "param x\nparam y\ncost x^2/2 + (y - 1)^2")
	if cost.Form() != model.Cost {
		t.Errorf("Form() = %v, want cost", cost.Form())
	}
	v, g, h := derivs(cost, []float64{1, 3})
	if v != -4.5 || g[0] != -1 || g[1] != -4 || h[0][0] != -1 || h[1][1] != -2 || h[0][1] != 0 {
		t.Errorf("cost x^2/2 + (y-1)^2 at (1, 3): %v %v %v, want -4.5 [-1 -4] [[-1 0] [0 -2]]", v, g, h)
	}
	if ps := cost.Params(); len(ps) != 2 || ps[0].Name != "x" || ps[1].Name != "y" {
		t.Errorf("Params() = %v", ps)
	}
}

func TestNoPanicOnBadInput(t *testing.T) {
	ev := compileSrc(t, "param x\nparam y\nlog(x) + sqrt(y) + lgamma(x) + 1/y")
	// Wrong lengths give NaN, never a panic.
	if v := ev.LogDensity([]float64{1}); !math.IsNaN(v) {
		t.Errorf("short x: %v", v)
	}
	g := make([]float64, 1)
	if v := ev.LogDensityDerivs([]float64{1, 2}, g, make([]float64, 4)); !math.IsNaN(v) || !math.IsNaN(g[0]) {
		t.Errorf("short gradient: %v %v", v, g)
	}
	out := []float64{1, 2, 3}
	ev.LogDensityBlock([][]float64{{1, 2}, {1, 2}}, out)
	for _, v := range out {
		if !math.IsNaN(v) {
			t.Errorf("short columns: %v", out)
		}
	}
	ev.LogDensityBlock(nil, nil)
	// Outside the domain: NaN (log of a negative number), -Inf, +Inf.
	cases := []struct {
		x    []float64
		want float64
	}{
		{[]float64{-1, 1}, math.NaN()},
		{[]float64{1, -1}, math.NaN()},
		{[]float64{0, 1}, math.NaN()}, // log 0 + lgamma(0) = -Inf + Inf
		{[]float64{1, 0}, math.Inf(1)},
		{[]float64{math.Inf(1), 1}, math.Inf(1)},
	}
	for _, c := range cases {
		got := ev.LogDensity(c.x)
		if !near(got, c.want, 0, 1) {
			t.Errorf("at %v = %v, want %v", c.x, got, c.want)
		}
	}
}

func TestCloneIndependent(t *testing.T) {
	ev := compileSrc(t, "y = [1, 2, 3, 4, 5]\nparam a\nparam b\nsum((y - a)^2) * b + a*b")
	c := ev.Clone().(*Evaluator)
	x1, x2 := []float64{0.5, 2}, []float64{-1, 3}
	v1 := ev.LogDensity(x1)
	v2 := c.LogDensity(x2)
	if ev.LogDensity(x1) != v1 || c.LogDensity(x2) != v2 || v1 == v2 {
		t.Errorf("clones interfere: %v %v", v1, v2)
	}
	// Concurrent use of clones (run with -race to check for sharing).
	done := make(chan float64)
	for k := 0; k < 4; k++ {
		e := ev.Clone()
		go func() {
			var s float64
			g := make([]float64, 2)
			h := make([]float64, 4)
			for i := 0; i < 200; i++ {
				s += e.LogDensityDerivs(x2, g, h)
			}
			done <- s
		}()
	}
	for k := 0; k < 4; k++ {
		if s := <-done; !near(s, 200*v2, 1e-12, 1) {
			t.Errorf("concurrent clone: %v, want %v", s, 200*v2)
		}
	}
}

func TestNoAllocations(t *testing.T) {
	srcs := []string{bananaSrc, gaussSrc(300), "param a\nparam b\nv = [a, b, 1]\nw = [1, 2, 3]\nlogsumexp(v) + logsumexp(a*w + b) + max(exp(w*b))"}
	for _, src := range srcs {
		ev := compileSrc(t, src)
		d := ev.Dim()
		x := make([]float64, d)
		for i := range x {
			x[i] = 0.5 + float64(i)
		}
		g := make([]float64, d)
		h := make([]float64, d*d)
		cols := make([][]float64, d)
		for i := range cols {
			cols[i] = make([]float64, 700)
		}
		out := make([]float64, 700)
		if n := testing.AllocsPerRun(20, func() { ev.LogDensity(x) }); n != 0 {
			t.Errorf("LogDensity allocates %v times", n)
		}
		if n := testing.AllocsPerRun(20, func() { ev.LogDensityDerivs(x, g, h) }); n != 0 {
			t.Errorf("LogDensityDerivs allocates %v times", n)
		}
		if n := testing.AllocsPerRun(5, func() { ev.LogDensityBlock(cols, out) }); n != 0 {
			t.Errorf("LogDensityBlock allocates %v times", n)
		}
	}
}

func TestLoopSchedules(t *testing.T) {
	// Vectors of two lengths, three levels of reductions feeding each
	// other, and a 300-element vector of parameter expressions (more than
	// a chunk), against direct Go.
	y := []float64{0.5, 1.5, -0.3, 2.2, 0.9}
	z := []float64{3, 1, 4, 1, 5, 9, 2}
	var elems []string
	for i := 0; i < 300; i++ {
		elems = append(elems, "a*"+strconvF(float64(i)/100)+" + b")
	}
	src := "y = " + vectorLiteral(y) + "\nz = " + vectorLiteral(z) + "\nparam a\nparam b\n" +
		"v = [" + strings.Join(elems, ", ") + "]\n" +
		"m1 = logsumexp(a*y)\n" + // level 1
		"m2 = max(exp(b*z - m1))\n" + // level 2 uses m1
		"m3 = sum((y - m2)^2)\n" + // level 3 uses m2
		"m3 + sum(z*a^2) + logsumexp(v) - mean(exp(v/10))\n"
	ev := compileSrc(t, src)
	ref := func(a, b float64) float64 {
		m := math.Inf(-1)
		for _, v := range y {
			m = math.Max(m, a*v)
		}
		var s float64
		for _, v := range y {
			s += math.Exp(a*v - m)
		}
		m1 := m + math.Log(s)
		m2 := math.Inf(-1)
		for _, v := range z {
			m2 = math.Max(m2, math.Exp(b*v-m1))
		}
		var m3 float64
		for _, v := range y {
			m3 += (v - m2) * (v - m2)
		}
		var sz float64
		for _, v := range z {
			sz += v * a * a
		}
		vm := math.Inf(-1)
		for i := 0; i < 300; i++ {
			vm = math.Max(vm, a*float64(i)/100+b)
		}
		var vs, ve float64
		for i := 0; i < 300; i++ {
			x := a*float64(i)/100 + b
			vs += math.Exp(x - vm)
			ve += math.Exp(x / 10)
		}
		return m3 + sz + vm + math.Log(vs) - ve/300
	}
	check := func(ev *Evaluator) {
		for _, p := range [][]float64{{0.3, 0.2}, {-1.2, 0.5}, {2, -0.7}} {
			if got, want := ev.LogDensity(p), ref(p[0], p[1]); !near(got, want, 1e-12, 1) {
				t.Errorf("at %v = %.16g, direct %.16g\n%s", p, got, want, ev.Tape())
			}
			fdCheck(t, "schedules", ev, p, 1e-5)
		}
	}
	check(ev)
	// Without the quadratic forms (sum((y - m2)^2) is one, in m2) the
	// three levels are three loops.
	rewriteQuadratic = false
	plain := compileSrc(t, src)
	rewriteQuadratic = true
	check(plain)
	if len(plain.prog.loops) < 4 {
		t.Errorf("%d loops, want at least 4 (three levels and two lengths)\n%s", len(plain.prog.loops), plain.Tape())
	}
}

func strconvF(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }
