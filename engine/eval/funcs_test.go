package eval

import (
	"errors"
	"fmt"
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mathext"

	"bellcheck/engine/model"
)

func TestEveryFunctionImplemented(t *testing.T) {
	for _, name := range model.FuncNames() {
		info := model.Funcs[name]
		if _, ok := impls[name]; !ok {
			t.Errorf("function %s of model.Funcs has no implementation in eval", name)
			continue
		}
		// And it compiles and evaluates to a number in a model.
		args := make([]string, info.MinArgs)
		for i := range args {
			args[i] = fmt.Sprintf("(0.3 + 0.1*%d + x^2)", i)
		}
		if strings.HasPrefix(name, "ld_") {
			args[0] = "0.5"
			if name == "ld_binomial" {
				args[0], args[1] = "2", "5"
			}
		}
		src := fmt.Sprintf("param x\n%s(%s)\n", name, strings.Join(args, ", "))
		ev := compileSrc(t, src)
		if v := ev.LogDensity([]float64{0.2}); math.IsNaN(v) || math.IsInf(v, 0) {
			t.Errorf("%s: value %v at x = 0.2", src, v)
		}
	}
	for name := range impls {
		if _, ok := model.Funcs[name]; !ok {
			t.Errorf("eval implements %s, which model.Funcs does not list", name)
		}
	}
}

// unaryCase gives a unary function's first and second derivatives in
// closed form, written here independently of the implementation, and points
// of its domain.
type unaryCase struct {
	name   string
	f      func(x float64) float64
	d1, d2 func(x float64) float64
	pts    []float64
	tol    float64 // relative tolerance of the closed-form checks; 0 means 1e-12
}

func logistic(x float64) float64 { return 1 / (1 + math.Exp(-x)) }

var unaryCases = []unaryCase{
	// Derivatives of the elementary functions (the standard ones, as in
	// A&S chapter 4; from memory).
	{"exp", math.Exp, math.Exp, math.Exp, []float64{-3, -0.5, 0, 1.2, 4}, 0},
	{"log", math.Log, func(x float64) float64 { return 1 / x }, func(x float64) float64 { return -1 / (x * x) }, []float64{0.05, 0.7, 1, 3, 40}, 0},
	{"log1p", math.Log1p, func(x float64) float64 { return 1 / (1 + x) }, func(x float64) float64 { return -1 / ((1 + x) * (1 + x)) }, []float64{-0.9, -1e-3, 0, 0.4, 7}, 0},
	{"expm1", math.Expm1, math.Exp, math.Exp, []float64{-4, -1e-3, 0, 0.4, 3}, 0},
	{"sqrt", math.Sqrt, func(x float64) float64 { return 0.5 / math.Sqrt(x) }, func(x float64) float64 { return -0.25 * math.Pow(x, -1.5) }, []float64{0.1, 0.5, 1, 9, 100}, 0},
	{"abs", math.Abs, func(x float64) float64 { return math.Copysign(1, x) }, func(float64) float64 { return 0 }, []float64{-3, -0.2, 0.2, 5}, 0},
	{"sin", math.Sin, math.Cos, func(x float64) float64 { return -math.Sin(x) }, []float64{-2, -0.3, 0, 1, 3}, 0},
	{"cos", math.Cos, func(x float64) float64 { return -math.Sin(x) }, func(x float64) float64 { return -math.Cos(x) }, []float64{-2, -0.3, 0, 1, 3}, 0},
	{"tan", math.Tan, func(x float64) float64 { c := math.Cos(x); return 1 / (c * c) },
		func(x float64) float64 { c := math.Cos(x); return 2 * math.Sin(x) / (c * c * c) }, []float64{-1.2, -0.3, 0, 0.7, 1.4}, 0},
	{"atan", math.Atan, func(x float64) float64 { return 1 / (1 + x*x) }, func(x float64) float64 { return -2 * x / ((1 + x*x) * (1 + x*x)) }, []float64{-5, -0.3, 0, 1, 8}, 0},
	{"sinh", math.Sinh, math.Cosh, math.Sinh, []float64{-3, -0.1, 0, 1, 4}, 0},
	{"cosh", math.Cosh, math.Sinh, math.Cosh, []float64{-3, -0.1, 0, 1, 4}, 0},
	{"tanh", math.Tanh, func(x float64) float64 { c := math.Cosh(x); return 1 / (c * c) },
		func(x float64) float64 { c := math.Cosh(x); return -2 * math.Sinh(x) / (c * c * c) }, []float64{-3, -0.1, 0, 1, 4}, 0},
	// erf: d/dx erf x = 2/sqrt(pi) e^(-x^2) (differentiating the
	// definition A&S 7.1.1), and once more.
	{"erf", math.Erf, func(x float64) float64 { return 2 / math.SqrtPi * math.Exp(-x*x) },
		func(x float64) float64 { return -4 * x / math.SqrtPi * math.Exp(-x*x) }, []float64{-2.5, -0.4, 0, 0.9, 3}, 0},
	{"erfc", math.Erfc, func(x float64) float64 { return -2 / math.SqrtPi * math.Exp(-x*x) },
		func(x float64) float64 { return 4 * x / math.SqrtPi * math.Exp(-x*x) }, []float64{-2.5, -0.4, 0, 0.9, 3}, 0},
	// lgamma' = psi (A&S 6.3.1) from gonum's mathext.Digamma (accurate to
	// about 5e-11, hence the tolerance); psi' = zeta(2, x)
	// and psi'' = -2 zeta(3, x) (A&S 6.4.10) from gonum's mathext.Zeta.
	{"lgamma", func(x float64) float64 { v, _ := math.Lgamma(x); return v }, mathext.Digamma,
		func(x float64) float64 { return mathext.Zeta(2, x) }, []float64{0.1, 0.8, 1.5, 4, 30, -0.5, -2.3}, 1e-10},
	{"digamma", mathext.Digamma, func(x float64) float64 { return mathext.Zeta(2, x) },
		func(x float64) float64 { return -2 * mathext.Zeta(3, x) }, []float64{0.1, 0.8, 1.5, 4, 30, -0.5, -2.3}, 1e-10},
	// logistic s: s' = s(1-s), s'' = s(1-s)(1-2s) (from s' = s - s^2).
	{"logistic", logistic, func(x float64) float64 { s := logistic(x); return s * (1 - s) },
		func(x float64) float64 { s := logistic(x); return s * (1 - s) * (1 - 2*s) }, []float64{-6, -1, 0, 0.5, 5}, 0},
	// softplus: derivative the logistic function.
	{"log1pexp", func(x float64) float64 { return math.Log(1 + math.Exp(x)) }, logistic,
		func(x float64) float64 { s := logistic(x); return s * (1 - s) }, []float64{-6, -1, 0, 0.5, 5}, 0},
}

func TestUnaryFunctionsClosedForms(t *testing.T) {
	// In two parameters: f(u) with u = 0.7 x - 0.4 y + c has gradient
	// f'(u) (0.7, -0.4) and Hessian f''(u) [0.49 -0.28; -0.28 0.16].
	for _, c := range unaryCases {
		ev := compileSrc(t, fmt.Sprintf("param x\nparam y\n%s(0.7*x - 0.4*y)\n", c.name))
		for _, u := range c.pts {
			// Pick x, y with 0.7 x - 0.4 y = u exactly enough: y = 0.25, x = (u + 0.1)/0.7.
			x := []float64{(u + 0.1) / 0.7, 0.25}
			u := 0.7*x[0] - 0.4*x[1]
			v, g, h := derivs(ev, x)
			f1, f2 := c.d1(u), c.d2(u)
			tol := c.tol
			if tol == 0 {
				tol = 1e-12
			}
			wantG := []float64{0.7 * f1, -0.4 * f1}
			wantH := [][]float64{{0.49 * f2, -0.28 * f2}, {-0.28 * f2, 0.16 * f2}}
			if !near(v, c.f(u), max(1e-14, tol), 1) {
				t.Errorf("%s(%v) = %v, want %v", c.name, u, v, c.f(u))
			}
			for i := 0; i < 2; i++ {
				if !near(g[i], wantG[i], tol, 1) {
					t.Errorf("%s at u=%v: gradient[%d] = %.15g, closed form %.15g", c.name, u, i, g[i], wantG[i])
				}
				for j := 0; j < 2; j++ {
					if !near(h[i][j], wantH[i][j], tol, 1) {
						t.Errorf("%s at u=%v: Hessian[%d][%d] = %.15g, closed form %.15g", c.name, u, i, j, h[i][j], wantH[i][j])
					}
				}
			}
			fdCheck(t, c.name, ev, x, 1e-6)
		}
	}
}

func TestBinaryAndVariadicFunctions(t *testing.T) {
	// Each against finite differences at several points, in 1 to 4
	// parameters; closed forms for some below.
	cases := []struct {
		src string
		pts [][]float64
	}{
		{"param x\nparam y\npow(x, y)", [][]float64{{1.3, 0.7}, {0.4, -1.5}, {2.5, 3}}},
		{"param x\nparam y\nx^y + y^3 - x^-2 + x^0.5 + x^7 - 2^y", [][]float64{{1.3, 0.7}, {0.4, -1.5}, {2.5, 1.1}}},
		{"param x\nparam y\nx^1.7 + x^-0.5 + 3.1^x", [][]float64{{1.3, 0.7}, {0.4, -1.5}}},
		{"param x\nparam y\nx / y - y / x + 2 / x", [][]float64{{1.3, 0.7}, {-0.4, -1.5}}},
		{"param x\nparam y\nparam z\nmin(x*y, z, x + 1) + max(x, y*z)", [][]float64{{1.3, 0.7, 4}, {-0.4, -1.5, 0.1}, {2, 3, 0.5}}},
		{"param x\nparam y\nparam z\nlogsumexp(x*y, z, x + 1)", [][]float64{{1.3, 0.7, 4}, {-0.4, -1.5, 0.1}, {200, 300, 250}}},
		{"param a\nparam b\nparam c\nparam d\nsin(a*b) * exp(c - d^2) + log1pexp(a - c) * tanh(b*d)", [][]float64{{0.3, 0.7, -0.2, 0.5}, {1.1, -0.4, 0.9, -1.3}}},
		{"param a\nparam b\nparam c\nparam d\nlgamma(a^2 + 0.5) + digamma(b^2 + 1) * erf(c*d) - logistic(a*d) / (1 + c^2)", [][]float64{{0.3, 0.7, -0.2, 0.5}, {1.1, -0.4, 0.9, -1.3}}},
		{"param a\nparam b\nv = [a, b, a*b]\nsum(v^2) + mean([a, 2*b]) - len([a, b, 1])", [][]float64{{0.3, 0.7}, {-1.1, 2}}},
		{"param a\nparam b\nlogsumexp([a, b, a*b]) + min([a, b^2]) + max([a, -b])", [][]float64{{0.3, 0.7}, {-1.1, 2}}},
		{"param a\nsqrt(abs(a)) + expm1(a) + log1p(a^2) + atan(a) + cosh(a) - sinh(a) + cos(a) + tan(a/3) + erfc(a)", [][]float64{{0.3}, {-1.1}, {2}}},
	}
	for _, c := range cases {
		ev := compileSrc(t, c.src)
		for _, x := range c.pts {
			fdCheck(t, c.src, ev, x, 1e-6)
		}
		blockMatches(t, c.src, ev, c.pts)
	}
}

func TestPowClosedForm(t *testing.T) {
	// f = x^y: f_x = y x^(y-1), f_y = x^y log x, f_xx = y(y-1) x^(y-2),
	// f_xy = x^(y-1) (1 + y log x), f_yy = x^y log^2 x (calculus, from memory).
	ev := compileSrc(t, "param x\nparam y\nx^y")
	for _, p := range [][2]float64{{1.3, 0.7}, {0.4, -1.5}, {2.5, 3}, {7, 0.1}} {
		x, y := p[0], p[1]
		v, g, h := derivs(ev, p[:])
		l := math.Log(x)
		f := math.Pow(x, y)
		want := []float64{y * math.Pow(x, y-1), f * l, y * (y - 1) * math.Pow(x, y-2), math.Pow(x, y-1) * (1 + y*l), f * l * l}
		got := []float64{g[0], g[1], h[0][0], h[0][1], h[1][1]}
		if !near(v, f, 1e-15, 1) {
			t.Errorf("x^y at %v = %v, want %v", p, v, f)
		}
		for i := range want {
			if !near(got[i], want[i], 1e-13, 1) {
				t.Errorf("x^y at %v: derivative %d = %.16g, closed form %.16g", p, i, got[i], want[i])
			}
		}
	}
}

func TestLogSumExpClosedForm(t *testing.T) {
	// lse(u): gradient w = softmax(u), Hessian diag(w) - w w^T (common
	// knowledge of the log-partition function), here of u = (x, y, x + y).
	ev := compileSrc(t, "param x\nparam y\nlogsumexp(x, y, x + y)")
	evv := compileSrc(t, "param x\nparam y\nlogsumexp([x, y, x + y])")
	for _, p := range [][]float64{{0.3, -0.2}, {2, 1}, {-40, 30}, {500, 501}} {
		u := []float64{p[0], p[1], p[0] + p[1]}
		m := math.Max(u[0], math.Max(u[1], u[2]))
		var s float64
		for _, ui := range u {
			s += math.Exp(ui - m)
		}
		w := make([]float64, 3)
		for i, ui := range u {
			w[i] = math.Exp(ui-m) / s
		}
		// d u / d(x, y): rows (1,0), (0,1), (1,1).
		J := [][]float64{{1, 0}, {0, 1}, {1, 1}}
		wantV := m + math.Log(s)
		var wantG [2]float64
		var wantH [2][2]float64
		for i := 0; i < 3; i++ {
			for a := 0; a < 2; a++ {
				wantG[a] += w[i] * J[i][a]
				for b := 0; b < 2; b++ {
					wantH[a][b] += w[i] * J[i][a] * J[i][b]
				}
			}
		}
		for a := 0; a < 2; a++ {
			for b := 0; b < 2; b++ {
				wantH[a][b] -= wantG[a] * wantG[b]
			}
		}
		for _, e := range []*Evaluator{ev, evv} {
			v, g, h := derivs(e, p)
			if !near(v, wantV, 1e-14, 1) {
				t.Errorf("logsumexp at %v = %v, want %v", p, v, wantV)
			}
			for a := 0; a < 2; a++ {
				if !near(g[a], wantG[a], 1e-13, 1) {
					t.Errorf("logsumexp at %v: gradient[%d] = %v, want %v", p, a, g[a], wantG[a])
				}
				for b := 0; b < 2; b++ {
					if !near(h[a][b], wantH[a][b], 1e-13, 1) {
						t.Errorf("logsumexp at %v: Hessian[%d][%d] = %v, want %v", p, a, b, h[a][b], wantH[a][b])
					}
				}
			}
		}
	}
}

func TestMinMaxAbsBranches(t *testing.T) {
	// The derivative of the selected branch: min(x^2, y) is x^2 where
	// x^2 <= y, else y; abs(x) has slope sign(x), 0 at 0 (a subgradient).
	ev := compileSrc(t, "param x\nparam y\nmin(x^2, y) + 3*abs(x - y)")
	cases := []struct {
		x     []float64
		wantG []float64
	}{
		{[]float64{1, 2}, []float64{2 - 3, 3}}, // x^2 = 1 < 2; x - y < 0
		{[]float64{2, 1}, []float64{3, 1 - 3}}, // y = 1 < 4; x - y > 0
		{[]float64{1.5, 1.5}, []float64{0, 1}}, // y < x^2; abs at 0 has slope 0
	}
	for _, c := range cases {
		_, g, _ := derivs(ev, c.x)
		for i := range g {
			if g[i] != c.wantG[i] {
				t.Errorf("at %v: gradient %v, want %v", c.x, g, c.wantG)
				break
			}
		}
	}
}

func TestCompileErrors(t *testing.T) {
	x := &model.Ident{Name: "x", Kind: model.ParamRef, Index: 0}
	cases := []struct {
		name string
		m    *model.Model
		want error
	}{
		{"nil", nil, ErrNotChecked},
		{"no params", &model.Model{Density: &model.Number{Value: 1}}, ErrTooManyParams},
		{"unresolved", &model.Model{Params: []model.Param{{Name: "x"}}, Density: &model.Ident{Name: "z"}}, ErrNotChecked},
		{"bad index", &model.Model{Params: []model.Param{{Name: "x"}}, Density: &model.Ident{Name: "x", Kind: model.ParamRef, Index: 3}}, ErrNotChecked},
		{"unknown function", &model.Model{Params: []model.Param{{Name: "x"}}, Density: &model.Call{Name: "gamma", Args: []model.Expr{x}}}, ErrUnknownFunction},
		{"arity", &model.Model{Params: []model.Param{{Name: "x"}}, Density: &model.Call{Name: "exp", Args: []model.Expr{x, x}}}, ErrArity},
		{"vector density", &model.Model{Params: []model.Param{{Name: "x"}}, Density: &model.Vector{Elems: []model.Expr{x, x}}}, ErrShape},
		{"lengths", &model.Model{Params: []model.Param{{Name: "x"}}, Density: &model.Call{Name: "sum", Args: []model.Expr{
			&model.Binary{Op: '+', X: &model.Vector{Elems: []model.Expr{x, x}}, Y: &model.Vector{Elems: []model.Expr{x, x, x}}}}}}, ErrShape},
		{"self reference", &model.Model{Params: []model.Param{{Name: "x"}},
			Defs:    []model.Def{{Name: "d", Value: &model.Ident{Name: "d", Kind: model.DefRef, Index: 0}}},
			Density: &model.Ident{Name: "d", Kind: model.DefRef, Index: 0}}, ErrNotChecked},
	}
	for _, c := range cases {
		_, err := Compile(c.m)
		if !errors.Is(err, c.want) {
			t.Errorf("%s: error %v, want %v", c.name, err, c.want)
		}
	}
}
