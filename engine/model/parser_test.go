package model

import (
	"math"
	"strings"
	"testing"
)

type wantParam struct {
	name     string
	lo, hi   float64
	declared bool
}

type wantDef struct {
	name string
	len  int
	dep  bool
}

var inf = math.Inf(1)

func free(name string) wantParam { return wantParam{name, -inf, inf, false} }

var validModels = []struct {
	name   string
	src    string
	params []wantParam
	defs   []wantDef
	form   Form
	format string // canonical text; "" to skip the comparison
}{
	{
		name:   "bare expression, implicit parameters in order of appearance",
		src:    "-x^2/2 - (y-1)^2/8 + x*y/4",
		params: []wantParam{free("x"), free("y")},
		format: "-x^2/2 - (y - 1)^2/8 + x*y/4\n",
	},
	{
		name: "data vector, support, reductions",
		src: `# counts per minute seen by a detector
k = [3, 5, 2, 4, 6, 3]
param rate in [0, inf]
ld_gamma(rate, 2, 0.5) + sum(ld_poisson(k, rate))`,
		params: []wantParam{{"rate", 0, inf, true}},
		defs:   []wantDef{{"k", 6, false}},
		format: "k = [3, 5, 2, 4, 6, 3]\nparam rate in [0, inf]\nld_gamma(rate, 2, 0.5) + sum(ld_poisson(k, rate))\n",
	},
	{
		name:   "declared parameters first in declaration order, then implicit ones",
		src:    "param b\nparam a in [-inf, 2*pi]\nc + a + b",
		params: []wantParam{{"b", -inf, inf, true}, {"a", -inf, 2 * math.Pi, true}, free("c")},
		format: "param b\nparam a in [-inf, 2*pi]\nc + a + b\n",
	},
	{
		name:   "a declaration after the first use still fixes the order",
		src:    "a + b\nparam b",
		params: []wantParam{{"b", -inf, inf, true}, free("a")},
	},
	{
		name:   "cost form",
		src:    "cost (a-1)^2 + (b+2)^2/4",
		params: []wantParam{free("a"), free("b")},
		form:   Cost,
		format: "cost (a - 1)^2 + (b + 2)^2/4\n",
	},
	{
		name:   "intermediate vector depending on the parameters",
		src:    "t=[0.5, 1, 2.5]\ny=[1,2,3]\nmu = a + b*t\nsum(ld_normal(y, mu, 1))",
		params: []wantParam{free("a"), free("b")},
		defs:   []wantDef{{"t", 3, false}, {"y", 3, false}, {"mu", 3, true}},
		format: "t = [0.5, 1, 2.5]\ny = [1, 2, 3]\nmu = a + b*t\nsum(ld_normal(y, mu, 1))\n",
	},
	{
		name:   "first appearance counts uses inside definitions",
		src:    "z = q*2\nz + p + q",
		params: []wantParam{free("q"), free("p")},
		defs:   []wantDef{{"z", 0, true}},
	},
	{
		name:   "bounds from earlier constant definitions",
		src:    "lo = -1\nhi = 2*lo^2 + 1\nparam x in [lo, hi]\nx^2",
		params: []wantParam{{"x", -1, 3, true}},
		defs:   []wantDef{{"lo", 0, false}, {"hi", 0, false}},
	},
	{
		name:   "vector over several lines with a trailing comma",
		src:    "t = [1,\n  2,   # second\n  3,\n]\nsum(t)*a",
		params: []wantParam{free("a")},
		defs:   []wantDef{{"t", 3, false}},
		format: "t = [1, 2, 3]\nsum(t)*a\n",
	},
	{
		name:   "call arguments over several lines",
		src:    "ld_normal(a,\n   0,\n   1)",
		params: []wantParam{free("a")},
		format: "ld_normal(a, 0, 1)\n",
	},
	{
		name:   "comments and semicolons",
		src:    "# a comment\na = 1; b^2 * a # tail\n\n;;\n",
		params: []wantParam{free("b")},
		defs:   []wantDef{{"a", 0, false}},
		format: "a = 1\nb^2*a\n",
	},
	{
		name:   "len does not depend on the parameters",
		src:    "t = [1,2]\nn = len(t)\nm = len([a, 1])\na*n*m",
		params: []wantParam{free("a")},
		defs:   []wantDef{{"t", 2, false}, {"n", 0, false}, {"m", 0, false}},
	},
	{
		name:   "reductions of scalars and of vectors",
		src:    "logsumexp(a, b, 0) + max([1, 2, 3]) + min(a) + sum(b) + mean([a, b])",
		params: []wantParam{free("a"), free("b")},
	},
	{
		name:   "elementwise broadcast of scalars and vectors",
		src:    "t = [1, 2, 3]\nu = exp(t) - t/2 + 1\nsum(ld_student(u, 3, a, 2) + t)",
		params: []wantParam{free("a")},
		defs:   []wantDef{{"t", 3, false}, {"u", 3, false}},
	},
	{
		name:   "unicode names",
		src:    "μ^2/2 + σ_1",
		params: []wantParam{free("μ"), free("σ_1")},
		format: "μ^2/2 + σ_1\n",
	},
	{
		name:   "number forms",
		src:    ".5*a + 1e-3 + 2E+3 + 1. + 1e9",
		params: []wantParam{free("a")},
		format: "0.5*a + 0.001 + 2000 + 1 + 1e+09\n",
	},
	{
		name:   "a one-element vector",
		src:    "v = [a]\nsum(v)",
		params: []wantParam{free("a")},
		defs:   []wantDef{{"v", 1, true}},
	},
	{
		name:   "CRLF line ends and a byte-order mark",
		src:    "\uFEFFa = 1\r\nb*a\r\n",
		params: []wantParam{free("b")},
		defs:   []wantDef{{"a", 0, false}},
		format: "a = 1\nb*a\n",
	},
	{
		name:   "four parameters, the limit",
		src:    "param d in [0, 1]\na + b + c + d",
		params: []wantParam{{"d", 0, 1, true}, free("a"), free("b"), free("c")},
	},
	{
		name:   "pi and inf as numbers",
		src:    "param s in [0, inf]\n-log(s) - pi*s",
		params: []wantParam{{"s", 0, inf, true}},
		format: "param s in [0, inf]\n-log(s) - pi*s\n",
	},
	{
		name:   "bounds with unary minus and power",
		src:    "param a in [-2^2, -(1)]\na",
		params: []wantParam{{"a", -4, -1, true}}, // -2^2 = -(2^2) = -4
		format: "param a in [-2^2, -1]\na\n",
	},
}

func TestParseValid(t *testing.T) {
	for _, tc := range validModels {
		t.Run(tc.name, func(t *testing.T) {
			m, err := Parse(tc.src)
			if err != nil {
				t.Fatalf("Parse: %v", err)
			}
			checkComplete(t, m)
			if len(m.Params) != len(tc.params) {
				t.Fatalf("params %v, want %v", m.Params, tc.params)
			}
			for i, w := range tc.params {
				p := m.Params[i]
				if p.Name != w.name || p.Lo != w.lo || p.Hi != w.hi || p.Declared != w.declared {
					t.Errorf("param %d = %s [%g, %g] declared=%v, want %s [%g, %g] declared=%v",
						i, p.Name, p.Lo, p.Hi, p.Declared, w.name, w.lo, w.hi, w.declared)
				}
			}
			if tc.defs != nil {
				if len(m.Defs) != len(tc.defs) {
					t.Fatalf("%d defs, want %d", len(m.Defs), len(tc.defs))
				}
				for i, w := range tc.defs {
					d := m.Defs[i]
					if d.Name != w.name || d.Shape.Len != w.len || d.DependsOnParams != w.dep {
						t.Errorf("def %d = %s len %d dep %v, want %s len %d dep %v",
							i, d.Name, d.Shape.Len, d.DependsOnParams, w.name, w.len, w.dep)
					}
				}
			}
			if m.Form != tc.form {
				t.Errorf("form %v, want %v", m.Form, tc.form)
			}
			if m.Source != tc.src {
				t.Errorf("source not kept")
			}
			if tc.format != "" {
				if got := Format(m); got != tc.format {
					t.Errorf("Format:\n%q\nwant\n%q", got, tc.format)
				}
			}
		})
	}
}

// TestPrecedence checks the tree the parser builds and the text the printer
// gives back.
func TestPrecedence(t *testing.T) {
	cases := []struct {
		src, tree, format string
	}{
		{"-x^2", "(- (^ x 2))", "-x^2"},
		{"2^-1*x", "(* (^ 2 (- 1)) x)", "2^-1*x"},
		{"2^-x^2", "(^ 2 (- (^ x 2)))", "2^-x^2"},
		{"2^3^2*x", "(* (^ 2 (^ 3 2)) x)", "2^3^2*x"},
		{"a-b-c", "(- (- a b) c)", "a - b - c"},
		{"a/b/c", "(/ (/ a b) c)", "a/b/c"},
		{"a - (b - c)", "(- a (- b c))", "a - (b - c)"},
		{"a + (b + c)", "(+ a (+ b c))", "a + (b + c)"},
		{"(a + b) + c", "(+ (+ a b) c)", "a + b + c"},
		{"a/(b*c)", "(/ a (* b c))", "a/(b*c)"},
		{"(a*b)*c", "(* (* a b) c)", "a*b*c"},
		{"a*(b*c)", "(* a (* b c))", "a*(b*c)"},
		{"-a*b", "(* (- a) b)", "-a*b"},
		{"a*-b", "(* a (- b))", "a*-b"},
		{"a - -b", "(- a (- b))", "a - -b"},
		{"(-a)^2", "(^ (- a) 2)", "(-a)^2"},
		{"(a^b)^c", "(^ (^ a b) c)", "(a^b)^c"},
		{"a^(b*c)", "(^ a (* b c))", "a^(b*c)"},
		{"-(-a)", "(- (- a))", "--a"},
		{"+a", "(+ a)", "+a"},
		{"-(a+b)", "(- (+ a b))", "-(a + b)"},
		{"2*(a+b)^2", "(* 2 (^ (+ a b) 2))", "2*(a + b)^2"},
		{"exp(a)^2", "(^ exp(a) 2)", "exp(a)^2"},
		{"((a))", "a", "a"},
		{"a + b*c^d", "(+ a (* b (^ c d)))", "a + b*c^d"},
		{"a^-b^c", "(^ a (- (^ b c)))", "a^-b^c"},
	}
	for _, tc := range cases {
		m, err := Parse(tc.src)
		if err != nil {
			t.Errorf("%q: %v", tc.src, err)
			continue
		}
		if got := dumpExpr(m.Density, false); got != tc.tree {
			t.Errorf("%q parsed as %s, want %s", tc.src, got, tc.tree)
		}
		if got := FormatExpr(m.Density); got != tc.format {
			t.Errorf("%q formatted as %q, want %q", tc.src, got, tc.format)
		}
	}
}

// TestConstantBounds checks the checker's arithmetic on constant bounds
// against Go's math package: 2^3^2 = 2^9 (right-associative), 2^-1 = 0.5,
// -2^2 = -4, a-b-c and a/b/c left-associative.
func TestConstantBounds(t *testing.T) {
	cases := []struct {
		hi   string
		want float64
	}{
		{"2^3^2", math.Pow(2, 9)},
		{"2^-1", math.Pow(2, -1)},
		{"-2^2 + 10", -math.Pow(2, 2) + 10},
		{"10-4-3", (10 - 4) - 3},
		{"64/4/2", (64.0 / 4) / 2},
		{"2*pi", 2 * math.Pi},
		{"+3", 3},
		{"inf", inf},
		{"1e308*10", inf},
	}
	for _, tc := range cases {
		src := "param a in [-inf, " + tc.hi + "]\na"
		m, err := Parse(src)
		if err != nil {
			t.Errorf("%q: %v", src, err)
			continue
		}
		if got := m.Params[0].Hi; got != tc.want {
			t.Errorf("%s = %g, want %g", tc.hi, got, tc.want)
		}
	}
}

// TestModelFiles parses every model in testdata/model/valid, and checks
// every model in testdata/model/invalid against the errors listed in its
// "# want: " comment lines.
func TestModelFiles(t *testing.T) {
	valid := readModelFiles(t, "valid")
	if len(valid) == 0 {
		t.Fatal("no valid model files")
	}
	for name, src := range valid {
		m, err := Parse(src)
		if err != nil {
			t.Errorf("%s: %s", name, Detail(err, src))
			continue
		}
		checkComplete(t, m)
		roundTrip(t, m)
	}
	invalid := readModelFiles(t, "invalid")
	if len(invalid) == 0 {
		t.Fatal("no invalid model files")
	}
	for name, src := range invalid {
		var want []string
		for _, line := range strings.Split(src, "\n") {
			if w, ok := strings.CutPrefix(line, "# want: "); ok {
				want = append(want, w)
			}
		}
		if len(want) == 0 {
			t.Errorf("%s: no '# want: ' lines", name)
			continue
		}
		_, err := Parse(src)
		list, ok := err.(ErrorList)
		if !ok {
			t.Errorf("%s: error %v (%T), want an ErrorList", name, err, err)
			continue
		}
		var got []string
		for _, e := range list {
			got = append(got, e.Error())
		}
		if strings.Join(got, "\n") != strings.Join(want, "\n") {
			t.Errorf("%s: errors\n%s\nwant\n%s", name, strings.Join(got, "\n"), strings.Join(want, "\n"))
		}
	}
}

// roundTrip checks that the canonical text parses to the same model and
// formats to itself.
func roundTrip(t *testing.T, m *Model) {
	t.Helper()
	out := Format(m)
	m2, err := Parse(out)
	if err != nil {
		t.Errorf("Format output does not parse: %v\n%s", err, out)
		return
	}
	if again := Format(m2); again != out {
		t.Errorf("Format not idempotent:\n%s\nthen\n%s", out, again)
	}
	if a, b := dumpModel(m), dumpModel(m2); a != b {
		t.Errorf("structure changed by Format:\n%s\nthen\n%s", a, b)
	}
}

func TestRoundTrip(t *testing.T) {
	for _, tc := range validModels {
		m, err := Parse(tc.src)
		if err != nil {
			t.Fatalf("%s: %v", tc.name, err)
		}
		roundTrip(t, m)
	}
	for _, src := range []string{
		"a - (b - (c - d))", "((a/b)/(c/d))^-(a*b)", "-(-(-a))^2", "2^-2^-2*a",
		"x = [1, -2, 3e-7, 1.5e300]\nsum(x^a)", "exp(-(a - 1)^2/2) + log1pexp(-a)",
		"cost -a + +a", "p = a*(b + c)\nq = -p^2\nq - (p - a)",
	} {
		m, err := Parse(src)
		if err != nil {
			t.Errorf("%q: %v", src, err)
			continue
		}
		checkComplete(t, m)
		roundTrip(t, m)
	}
}
