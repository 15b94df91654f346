package eval

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strconv"
	"testing"

	"gonum.org/v1/gonum/mathext"
	"gonum.org/v1/gonum/num/hyperdual"
)

// rtree is a random expression over the parameters, printed as model text
// and evaluated independently with gonum's hyperdual numbers, which carry a
// value, two first derivatives and the mixed second derivative.
type rtree struct {
	op    string // "num", "param", "+", "-", "*", "/", "^", "neg", or a function name
	val   float64
	param int
	args  []*rtree
}

var randUnary = []string{"exp", "log", "sqrt", "abs", "sin", "cos", "atan", "tanh", "sinh", "cosh", "erf", "erfc",
	"log1p", "expm1", "lgamma", "digamma", "logistic", "log1pexp", "neg", "tan",
	// Compositions the compiler rewrites (rewrite.go); the reference
	// evaluates them as written.
	"logexp", "loglogistic", "log1mlogistic", "log1pneglogistic", "log1pexpm1"}

// composed gives the model text of the rewritten compositions.
var composed = map[string]string{
	"logexp": "log(exp(%s))", "loglogistic": "log(logistic(%s))", "log1mlogistic": "log(1 - logistic(%s))",
	"log1pneglogistic": "log1p(-logistic(%s))", "log1pexpm1": "log1p(expm1(%s))",
}
var randBinary = []string{"+", "-", "*", "/", "^", "pow", "min", "max", "logsumexp", "sq", "cube", "inv"}

func randTree(r *rand.Rand, depth, dim int) *rtree {
	if depth == 0 || r.IntN(4) == 0 {
		if r.IntN(3) == 0 {
			return &rtree{op: "num", val: math.Round((r.Float64()*4-2)*100) / 100}
		}
		return &rtree{op: "param", param: r.IntN(dim)}
	}
	if r.IntN(2) == 0 {
		return &rtree{op: randUnary[r.IntN(len(randUnary))], args: []*rtree{randTree(r, depth-1, dim)}}
	}
	op := randBinary[r.IntN(len(randBinary))]
	switch op {
	case "sq", "cube", "inv": // x^2, x^3, x^-1 with constant exponents
		return &rtree{op: op, args: []*rtree{randTree(r, depth-1, dim)}}
	}
	return &rtree{op: op, args: []*rtree{randTree(r, depth-1, dim), randTree(r, depth-1, dim)}}
}

var paramNames = []string{"x", "y", "z", "w"}

var dataNames = []string{"dt", "dy"}

func (t *rtree) String() string {
	switch t.op {
	case "num":
		return "(" + strconv.FormatFloat(t.val, 'g', -1, 64) + ")"
	case "param":
		return paramNames[t.param]
	case "data":
		return dataNames[t.param]
	case "+", "-", "*", "/", "^":
		return "(" + t.args[0].String() + " " + t.op + " " + t.args[1].String() + ")"
	case "neg":
		return "(-" + t.args[0].String() + ")"
	case "sq":
		return "((" + t.args[0].String() + ")^2)"
	case "cube":
		return "((" + t.args[0].String() + ")^3)"
	case "inv":
		return "((" + t.args[0].String() + ")^-1)"
	}
	if f, ok := composed[t.op]; ok {
		return "(" + fmt.Sprintf(f, t.args[0].String()) + ")"
	}
	s := t.op + "("
	for i, a := range t.args {
		if i > 0 {
			s += ", "
		}
		s += a.String()
	}
	return s + ")"
}

// hd applies a unary function with derivatives f1, f2 to a hyperdual number
// (the chain rule for the value, both first parts and the mixed part).
func hd(x hyperdual.Number, f, f1, f2 float64) hyperdual.Number {
	return hyperdual.Number{Real: f, E1mag: f1 * x.E1mag, E2mag: f1 * x.E2mag, E1E2mag: f1*x.E1E2mag + f2*x.E1mag*x.E2mag}
}

// eval evaluates the tree with hyperdual numbers: the elementary functions
// are gonum's, the special ones by their derivatives from gonum's mathext.
func (t *rtree) eval(x []hyperdual.Number) hyperdual.Number { return t.evalAt(x, nil, 0) }

// evalAt evaluates the tree at element i of the data vectors.
func (t *rtree) evalAt(x []hyperdual.Number, data [][]float64, i int) hyperdual.Number {
	switch t.op {
	case "num":
		return hyperdual.Number{Real: t.val}
	case "param":
		return x[t.param]
	case "data":
		return hyperdual.Number{Real: data[t.param][i]}
	}
	a := t.args[0].evalAt(x, data, i)
	var b hyperdual.Number
	if len(t.args) > 1 {
		b = t.args[1].evalAt(x, data, i)
	}
	r := a.Real
	switch t.op {
	case "+":
		return hyperdual.Add(a, b)
	case "-":
		return hyperdual.Sub(a, b)
	case "*":
		return hyperdual.Mul(a, b)
	case "/":
		return hyperdual.Mul(a, hyperdual.Inv(b))
	case "^", "pow":
		if a.Real == 0 {
			// The slope of 0^p is 0 or infinite: no reference derivatives.
			return hyperdual.Number{Real: math.Pow(a.Real, b.Real), E1mag: math.NaN(), E2mag: math.NaN(), E1E2mag: math.NaN()}
		}
		if b.E1mag == 0 && b.E2mag == 0 && b.E1E2mag == 0 {
			// d/da a^p = p a^(p-1). (gonum's PowReal moves bases below
			// 1e-15 to 1e-15, so it is not used.)
			p := b.Real
			return hd(a, math.Pow(r, p), p*math.Pow(r, p-1), p*(p-1)*math.Pow(r, p-2))
		}
		return hyperdual.Pow(a, b)
	case "sq":
		return hyperdual.Mul(a, a)
	case "cube":
		return hyperdual.Mul(a, hyperdual.Mul(a, a))
	case "inv":
		return hyperdual.Inv(a)
	case "neg":
		return hyperdual.Scale(-1, a)
	case "logexp":
		return hyperdual.Log(hyperdual.Exp(a))
	case "log1pexpm1":
		e := hd(a, math.Expm1(r), math.Exp(r), math.Exp(r))
		q := e.Real
		return hd(e, math.Log1p(q), 1/(1+q), -1/((1+q)*(1+q)))
	case "loglogistic":
		// (log s)' = 1 - s = s(-x), (log s)'' = -s(x) s(-x) (calculus);
		// the value from the test's logistic, relative accurate.
		sp, sm := logistic(r), logistic(-r)
		return hd(a, math.Log(sp), sm, -sp*sm)
	case "log1mlogistic", "log1pneglogistic":
		// 1 - s(x) = s(-x) exactly, computed so (1 - logistic(x) as
		// written loses all digits for large x); derivatives -s(x) and
		// -s(x) s(-x).
		sp, sm := logistic(r), logistic(-r)
		return hd(a, math.Log(sm), -sp, -sp*sm)
	case "exp":
		return hyperdual.Exp(a)
	case "log":
		return hyperdual.Log(a)
	case "sqrt":
		return hyperdual.Sqrt(a)
	case "abs":
		if r == 0 {
			// A kink: no reference derivatives (|x|^2 is smooth there, so
			// any fixed subgradient would be wrong somewhere).
			return hd(a, 0, math.NaN(), math.NaN())
		}
		return hyperdual.Abs(a)
	case "sin":
		return hyperdual.Sin(a)
	case "cos":
		return hyperdual.Cos(a)
	case "tan":
		// tan' = 1 + tan^2 (calculus, from memory); gonum's Tan loses digits near
		// the poles, so it is not used.
		tn := math.Tan(r)
		return hd(a, tn, 1+tn*tn, 2*tn*(1+tn*tn))
	case "atan":
		return hyperdual.Atan(a)
	case "tanh":
		return hyperdual.Tanh(a)
	case "sinh":
		return hyperdual.Sinh(a)
	case "cosh":
		return hyperdual.Cosh(a)
	case "erf":
		g := 2 / math.SqrtPi * math.Exp(-r*r)
		return hd(a, math.Erf(r), g, -2*r*g)
	case "erfc":
		g := 2 / math.SqrtPi * math.Exp(-r*r)
		return hd(a, math.Erfc(r), -g, 2*r*g)
	case "log1p":
		return hd(a, math.Log1p(r), 1/(1+r), -1/((1+r)*(1+r)))
	case "expm1":
		return hd(a, math.Expm1(r), math.Exp(r), math.Exp(r))
	case "lgamma":
		lg, _ := math.Lgamma(r)
		return hd(a, lg, digammaRef(r), trigammaRef(r))
	case "digamma":
		return hd(a, digammaRef(r), trigammaRef(r), tetragammaRef(r))
	case "logistic":
		s := logistic(r)
		return hd(a, s, s*(1-s), s*(1-s)*(1-2*s))
	case "log1pexp":
		s := logistic(r)
		return hd(a, math.Max(r, 0)+math.Log1p(math.Exp(-math.Abs(r))), s, s*(1-s))
	case "min", "max":
		// NaN propagates (as Go's min and max).
		if math.IsNaN(a.Real) || math.IsNaN(b.Real) {
			return hyperdual.Number{Real: math.NaN()}
		}
		if (t.op == "min") == (a.Real <= b.Real) {
			return a
		}
		return b
	case "logsumexp":
		// With weights w = softmax(a, b): gradient w_a a' + w_b b', Hessian
		// w_a a'' + w_b b'' + w_a w_b (a' - b')(a' - b')^T (the Hessian of
		// log-sum-exp is diag(w) - w w^T). Through gonum's Exp and Log the
		// mixed part cancels catastrophically when a' is large.
		m := math.Max(a.Real, b.Real)
		if math.IsInf(m, 0) || math.IsNaN(m) {
			return hyperdual.Number{Real: m, E1mag: math.NaN(), E2mag: math.NaN(), E1E2mag: math.NaN()}
		}
		l := m + math.Log(math.Exp(a.Real-m)+math.Exp(b.Real-m))
		wa, wb := math.Exp(a.Real-l), math.Exp(b.Real-l)
		return hyperdual.Number{Real: l,
			E1mag:   wa*a.E1mag + wb*b.E1mag,
			E2mag:   wa*a.E2mag + wb*b.E2mag,
			E1E2mag: wa*a.E1E2mag + wb*b.E1E2mag + wa*wb*(a.E1mag-b.E1mag)*(a.E2mag-b.E2mag)}
	}
	panic("unknown op " + t.op)
}

// digammaRef is gonum's mathext.Digamma taken further up the recurrence
// psi(x) = psi(x+20) - sum_{k<20} 1/(x+k) (A&S 6.3.6), where its series is
// accurate to rounding (at x near 7 it is not, to about 5e-11), with the
// reflection psi(x) = psi(1-x) - pi cot(pi x) (A&S 6.3.7) for x < 0.
func digammaRef(x float64) float64 {
	if x <= 0 && x == math.Floor(x) {
		return math.NaN()
	}
	if x < 0 {
		// cot(pi x) from the reduced argument (period 1), accurate near the poles.
		return digammaRef(1-x) - math.Pi/math.Tan(math.Pi*(x-math.Round(x)))
	}
	s := mathext.Digamma(x + 20)
	for k := 19; k >= 0; k-- {
		s -= 1 / (x + float64(k))
	}
	return s
}

// trigammaRef is psi'(x) = zeta(2, x) (A&S 6.4.10), with the reflection
// psi'(x) = -psi'(1-x) + pi^2/sin^2(pi x) (A&S 6.4.7) for x < 0.
func trigammaRef(x float64) float64 {
	if x <= 0 && x == math.Floor(x) {
		return math.NaN()
	}
	if x < 0 {
		s := math.Sin(math.Pi * (x - math.Round(x)))
		return -trigammaRef(1-x) + math.Pi*math.Pi/(s*s)
	}
	return mathext.Zeta(2, x)
}

// tetragammaRef is psi”(x) = -2 zeta(3, x), with the reflection
// psi”(x) = psi”(1-x) - 2 pi^3 cot(pi x) / sin^2(pi x) for x < 0.
func tetragammaRef(x float64) float64 {
	if x <= 0 && x == math.Floor(x) {
		return math.NaN()
	}
	if x < 0 {
		s, c := math.Sincos(math.Pi * (x - math.Round(x))) // cot/sin^2 have period 1
		return tetragammaRef(1-x) - 2*math.Pi*math.Pi*math.Pi*c/(s*s*s)
	}
	return -2 * mathext.Zeta(3, x)
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// refAt evaluates the tree with hyperdual numbers at x, seeded for the
// derivatives in x_i (E1) and x_j (E2); i or j < 0 seeds nothing.
func refAt(tree *rtree, x []float64, i, j int) hyperdual.Number {
	hx := make([]hyperdual.Number, len(x))
	for k := range hx {
		hx[k] = hyperdual.Number{Real: x[k]}
	}
	if i >= 0 {
		hx[i].E1mag = 1
	}
	if j >= 0 {
		hx[j].E2mag = 1
	}
	return tree.eval(hx)
}

// wobble returns how much the reference moves when x moves by a few
// rounding errors (three sign patterns): the conditioning of the point, which
// bounds how closely two correct implementations can agree.
func wobble(tree *rtree, x []float64, i, j int, part func(hyperdual.Number) float64) float64 {
	base := part(refAt(tree, x, i, j))
	w := 0.0
	for pattern := 0; pattern < 3; pattern++ {
		y := append([]float64(nil), x...)
		for k := range y {
			sign := 1.0
			if pattern == 2 || (k+pattern)%2 == 1 {
				sign = -1
			}
			y[k] += sign * 4e-16 * math.Max(1, math.Abs(y[k]))
		}
		w = math.Max(w, math.Abs(part(refAt(tree, y, i, j))-base))
	}
	return w
}

// checkRandomPoint compares the evaluator with the hyperdual reference at
// x; it reports whether the point was compared (the reference is finite).
func checkRandomPoint(t *testing.T, src string, tree *rtree, ev *Evaluator, x []float64) bool {
	t.Helper()
	dim := len(x)
	want := refAt(tree, x, -1, -1).Real
	got := ev.LogDensity(x)
	if !finite(want) {
		if finite(got) && !math.IsNaN(want) {
			t.Errorf("%s at %v = %v, reference %v", src, x, got, want)
		}
		return false
	}
	real := func(h hyperdual.Number) float64 { return h.Real }
	w := wobble(tree, x, -1, -1, real)
	if !finite(w) {
		return false // undefined within rounding distance of x
	}
	if tol := 1e-12*math.Max(1, math.Abs(want)) + 1e4*w; !(math.Abs(got-want) <= tol) {
		t.Errorf("%s at %v = %.16g, reference %.16g", src, x, got, want)
		return false
	}
	v, g, h := derivs(ev, x)
	if !(v == got || !finite(v)) {
		t.Errorf("%s at %v: value with derivatives %v, alone %v", src, x, v, got)
	}
	e1 := func(h hyperdual.Number) float64 { return h.E1mag }
	e12 := func(h hyperdual.Number) float64 { return h.E1E2mag }
	for i := 0; i < dim; i++ {
		for j := i; j < dim; j++ {
			ref := refAt(tree, x, i, j)
			if !finite(ref.E1mag) || !finite(ref.E1E2mag) || !finite(ref.E2mag) {
				return false
			}
			w1, w12 := wobble(tree, x, i, j, e1), wobble(tree, x, i, j, e12)
			if !finite(w1) || !finite(w12) {
				return false
			}
			if j == i {
				tol := 1e-9*(1+math.Abs(ref.E1mag)) + 1e4*w1
				if !(math.Abs(g[i]-ref.E1mag) <= tol) {
					t.Errorf("%s at %v: gradient[%d] = %.16g, hyperdual %.16g", src, x, i, g[i], ref.E1mag)
					return false
				}
			}
			tol := 1e-9*(1+math.Abs(ref.E1E2mag)) + 1e4*w12
			if !(math.Abs(h[i][j]-ref.E1E2mag) <= tol) || h[i][j] != h[j][i] {
				t.Errorf("%s at %v: Hessian[%d][%d] = %.16g, hyperdual %.16g", src, x, i, j, h[i][j], ref.E1E2mag)
				return false
			}
		}
	}
	return true
}

func TestRandomExpressions(t *testing.T) {
	r := rand.New(rand.NewPCG(randSeed, 2))
	checked, rewritten := 0, 0
	for trial := 0; trial < 400; trial++ {
		dim := 1 + trial%4
		tree := randTree(r, 5, dim)
		if hasComposed(tree) {
			rewritten++
		}
		src := ""
		for k := 0; k < dim; k++ {
			src += "param " + paramNames[k] + "\n"
		}
		src += tree.String() + "\n"
		ev := compileSrc(t, src)
		var pts [][]float64
		for p := 0; p < 6; p++ {
			x := make([]float64, dim)
			for k := range x {
				x[k] = math.Round((r.Float64()*3-1.5)*1000) / 1000
			}
			pts = append(pts, x)
		}
		blockMatches(t, src, ev, pts)
		for _, x := range pts {
			if checkRandomPoint(t, src, tree, ev, x) {
				checked++
			}
		}
	}
	if rewritten < 40 {
		t.Errorf("only %d random trees have a composition the compiler rewrites", rewritten)
	}
	// Most random points must have been compared (the rest are outside a
	// function's domain).
	if checked < 800 {
		t.Errorf("only %d of 2400 random points had finite reference derivatives", checked)
	}
	t.Logf("%d points compared", checked)
}

func TestRandomExpressionsFiniteDifferences(t *testing.T) {
	// Value, gradient and Hessian consistent with each other (finite
	// differences of the value and of the gradient), on smoother trees.
	r := rand.New(rand.NewPCG(3, 4))
	for trial := 0; trial < 60; trial++ {
		dim := 1 + trial%4
		tree := randTree(r, 3, dim)
		src := ""
		for k := 0; k < dim; k++ {
			src += "param " + paramNames[k] + "\n"
		}
		src += tree.String() + "\n"
		ev := compileSrc(t, src)
		x := make([]float64, dim)
		for k := range x {
			x[k] = 0.3 + 0.2*float64(k) + 0.1*r.Float64()
		}
		v, g, h := derivs(ev, x)
		smooth := finite(v)
		for i := range g {
			smooth = smooth && finite(g[i]) && math.Abs(g[i]) < 1e4
			for j := range g {
				smooth = smooth && finite(h[i][j]) && math.Abs(h[i][j]) < 1e4
			}
		}
		if !smooth || hasKink(tree) {
			continue
		}
		fdCheck(t, fmt.Sprintf("%s", src), ev, x, 1e-4)
	}
}

// hasComposed reports whether the tree has a composition of composed.
func hasComposed(t *rtree) bool {
	if _, ok := composed[t.op]; ok {
		return true
	}
	for _, a := range t.args {
		if hasComposed(a) {
			return true
		}
	}
	return false
}

// hasKink reports whether the tree has min, max or abs, whose derivatives
// jump (finite differences may straddle the jump).
func hasKink(t *rtree) bool {
	if t.op == "min" || t.op == "max" || t.op == "abs" {
		return true
	}
	for _, a := range t.args {
		if hasKink(a) {
			return true
		}
	}
	return false
}

// randSeed seeds TestRandomExpressions (fixed, so failures reproduce).
var randSeed uint64 = 1
