package model

import (
	"errors"
	"strings"
	"testing"
)

// invalidModels lists models with the first error they must give (exact
// text and position) and, where there is one, a part of its hint.
var invalidModels = []struct {
	name, src, err, hint string
}{
	// Names and functions.
	{"unknown function with suggestion", "logsumexpp(a, b)", "1:1: unknown function logsumexpp", "did you mean logsumexp?"},
	{"unknown function, wrong case", "Exp(a)", "1:1: unknown function Exp", "did you mean exp?"},
	{"unknown function contained in a known one", "normal(a, 0, 1)", "1:1: unknown function normal", "did you mean ld_normal, ld_lognormal?"},
	{"unknown function far from all", "zzzzzzzz(a)", "1:1: unknown function zzzzzzzz", "the functions are exp, log"},
	{"parameter called as a function", "a*2 + a(b)", "1:7: a is a parameter, not a function", "to multiply, write a*(...)"},
	{"declared parameter called as a function", "param s\ns(2)", "2:1: s is a parameter, not a function", "write s*(...)"},
	{"definition called as a function", "k = 2\nk(a)", "2:1: k is defined at line 1 as a quantity, not a function", ""},
	{"constant called as a function", "pi(2)*a", "1:1: pi is a constant, not a function", ""},
	{"function used as a value", "exp + a", "1:1: exp is a function; call it as exp(x)", ""},
	{"wrong arity", "ld_normal(x, 1)", "1:1: wrong number of arguments for ld_normal: got 2, want 3", "ld_normal takes 3 arguments (x, mean, sd), got 2"},
	{"too many arguments", "exp(a, b)", "1:1: wrong number of arguments for exp: got 2, want 1", "exp takes 1 argument (x), got 2"},
	{"variadic with none", "a + min()", "1:5: wrong number of arguments for min: got 0, want at least 1", "min takes at least 1 argument"},
	{"sum of two", "sum(a, b)", "1:1: wrong number of arguments for sum: got 2, want 1", ""},
	{"use before definition", "x = y + 1\ny = 2\nx + a", "1:5: y is used before its definition at line 2", "move the definition of y above"},
	{"own definition", "x = x + 1\na*x", "1:5: x is used in its own definition", ""},
	{"redefinition", "x = 1\nx = 2\nx + a", "2:1: x is already defined at line 1", ""},
	{"define a declared parameter", "param a\na = 2\na", "2:1: a is declared as a parameter at line 1; it cannot also be defined", ""},
	{"define a function name", "exp = 2\na", "1:1: cannot define exp: it is the name of a function", ""},
	{"define pi", "pi = 3\na", "1:1: cannot define pi: it is a built-in constant", ""},
	{"declare inf", "param inf\na", "1:7: cannot declare inf as a parameter: it is a built-in constant", ""},
	{"declared twice", "param a\nparam a\na", "2:7: parameter a is already declared at line 1", ""},

	// Density statements and parameters.
	{"two density statements", "a^2\nb^2", "2:1: second density statement; the first is at line 1", "add its terms with +"},
	{"no density statement", "x = 1", "1:6: the model has no density statement", "cost EXPR"},
	{"no parameters", "2 + 3", "1:1: the model has no parameters", "param NAME"},
	{"five implicit parameters", "a+b+c+d+e", "1:9: too many parameters: e would be the fifth, and a model has at most 4 (a, b, c, d)", "misspelt"},
	{"five declared parameters", "param a; param b; param c; param d; param e\na+b+c+d+e", "1:43: too many parameters: e would be the fifth, and a model has at most 4 (a, b, c, d)", ""},
	{"misspelt name as a fifth parameter", "param sigma in [0, inf]\nparam mu\nparam nu\nparam w\nld_normal(w, mu, sigmaa) + nu", "5:18: too many parameters: sigmaa would be the fifth, and a model has at most 4 (sigma, mu, nu, w)", "check for a misspelt name: sigmaa (did you mean sigma?)"},
	{"misspelt names among implicit parameters", "param sigma in [0, inf]\nmu = 1\nld_normal(x, muu, sigma) + ld_normal(y, mu, sgma)", "3:45: too many parameters: sgma would be the fifth, and a model has at most 4 (sigma, x, muu, y)", "misspelt name: muu (did you mean mu?), sgma (did you mean sigma?)"},

	// Shapes.
	{"shape mismatch", "t = [1, 2, 3]\nu = [1, 2]\nsum(t * u) + a", "3:7: vector lengths differ in '*': the left side has 3 elements, the right side 2", ""},
	{"argument lengths differ", "t=[1,2]; u=[1,2,3]; sum(ld_normal(t, u, a))", "1:38: arguments of ld_normal differ in length: argument 1 is a vector of 2 elements, argument 2 a vector of 3", ""},
	{"vector density", "t = [1, 2]\nt*a", "2:1: the density must be a scalar, but this is a vector of 2 elements", "wrap it in sum(...)"},
	{"vector literal inside arithmetic", "sum([1, 2] + a)", "1:5: a vector literal may only be the whole right side of a definition or a function argument", "v = [1, 2, 3]"},
	{"vector of vectors", "x = [1, [2, 3]]\nsum(x)*a", "1:9: the elements of a vector must be scalars, but element 2 is a vector of 2 elements", ""},
	{"vectors given to a variadic reduction", "logsumexp([1,2], a)", "1:11: logsumexp takes either one vector or several scalars, but argument 1 of 2 is a vector of 2 elements", "a + log1pexp(b - a)"},
	{"vectors given to max", "max([1,2], a)", "1:5: max takes either one vector or several scalars, but argument 1 of 2 is a vector of 2 elements", "max(max(a), max(b))"},
	{"empty vector", "t = []\na", "1:5: empty vector", "at least one element"},

	// Bounds.
	{"lo >= hi", "param a in [1, 0]\na", "1:13: empty support for a: the lower bound 1 is not less than the upper bound 0", "LO < HI"},
	{"lo == hi", "param a in [2, 2]\na", "1:13: empty support for a: the lower bound 2 is not less than the upper bound 2", ""},
	{"unknown name in bound", "param a in [0, b]\na*b", "1:16: unknown name b in the bound", "earlier definitions"},
	{"parameter in bound", "param b\nparam a in [0, b]\na*b", "2:16: a bound must be constant, but b is a parameter", ""},
	{"vector literal in bound", "param a in [[0, 1], 2]\na", "1:13: a bound must be a scalar, not a vector", ""},
	{"vector definition in bound", "t = [1, 2]\nparam a in [t, 3]\na", "2:13: a bound must be a scalar, but t is a vector of 2 elements", ""},
	{"call in bound", "param a in [log(2), 3]\na", "1:13: a bound cannot call a function (log)", ""},
	{"non-arithmetic constant in bound", "c = log(2)\nparam a in [c, 3]\na", "2:13: cannot use c in a bound: it is not made of numbers and operators only", ""},
	{"bound depending on parameters", "param b\nc = 2*b\nparam a in [c, 3]\na*b", "3:13: a bound must be constant, but c depends on the parameters", ""},
	{"bound before its definition", "param a in [0, c]\nc = 2\na", "1:16: c is used before its definition at line 2", ""},
	{"NaN bound", "param a in [0, inf - inf]\na", "1:20: the bound of a is not a number: inf - inf is undefined", ""},

	// Syntax.
	{"unclosed paren at end of line", "x = (a + b\ny = 2\nx*y", "1:11: expected ')' to close '(' at 1:5, found end of line", ""},
	{"unclosed paren at end of input", "x = (a + b", "1:11: expected ')' to close '(' at 1:5, found end of input", ""},
	{"unclosed call", "ld_normal(a, 0, 1", "1:18: expected ',' or ')' to close '(' at 1:10, found end of input", ""},
	{"unclosed bracket before a definition", "x = [1, 2\ny = 3\nsum(x)+a", "1:10: expected ',' or ']' to close '[' at 1:5, found end of line", ""},
	{"missing comma in a vector", "t = [1, 2\n 3]\nsum(t)*a", "2:2: expected ',' or ']' to close '[' at 1:5, found number 3", "separate the elements with ','"},
	{"stray character", "a @ b", "1:3: unexpected character '@'", ""},
	{"unicode minus", "a \u2212 b", "1:3: unexpected character '\u2212'", "ASCII '-'"},
	{"control character", "a \v b", "1:3: unexpected character U+000B", ""},
	{"bad number with two points", "1.2.3 + a", "1:1: bad number 1.2.3", "one decimal point"},
	{"bad number without exponent digits", "1e + a", "1:1: bad number 1e", "exponent needs digits"},
	{"number glued to a name", "2x + 1", "1:1: bad number 2x", "write 2*x"},
	{"number too large", "1e400 * a", "1:1: number 1e400 is too large", "inf"},
	{"missing operator", "a b", "1:3: expected an operator or the end of the statement, found name b", "'*' between the factors"},
	{"missing operand", "x = a +\ny", "1:8: expected an expression after '+', found end of line", ""},
	{"double star", "2 ** a", "1:4: unexpected '*' after '*'", "x^2"},
	{"empty definition", "a = = 2", "1:5: expected an expression after '=', found '='", ""},
	{"unmatched paren", "a + b)", "1:6: unexpected ')' with no '(' to close", ""},
	{"assignment to an expression", "a + b = 3", "1:7: unexpected '=': only a name can be defined", ""},
	{"cost without expression", "cost", "1:5: expected an expression after cost, found end of input", ""},
	{"param without name", "param", "1:6: expected a parameter name after param, found end of input", ""},
	{"keyword as a parameter name", "param in\na", "1:7: expected a parameter name after param, found keyword in", "keyword"},
	{"keyword in an expression", "in + a", "1:1: expected an expression, found keyword in", "keyword"},
	{"support in parentheses", "param a in (0, 1)\na", "1:12: expected '[' after in, found '('", "[LO, HI]"},
	{"support without comma", "param a in [0 1]\na", "1:15: expected ',' between the lower and the upper bound, found number 1", ""},
	{"support with three bounds", "param a in [0, 1, 2]\na", "1:17: expected ']' to close '[' at 1:12, found ','", "two bounds"},
	{"two parameters in one statement", "param a, b\na*b", "1:8: unexpected ',' after the end of the statement", "one parameter per statement"},
	{"keyword defined", "cost = 2\na", "1:1: cannot define cost: it is a keyword", "another name"},
	{"junk after a declaration", "param a in [0, 1] b\na", "1:19: expected the end of the param statement, found name b", ""},
	{"function definition with a number argument", "f(2) = x^2\nf(a)", "1:3: expected an argument name in the definition of f, found number 2", "names as arguments"},
	{"superscript two", "a\u00b2", "1:2: unexpected character '\u00b2'", "x^2"},
	{"caret without base", "^2", "1:1: expected an expression, found '^'", ""},
	{"empty call argument", "ld_normal(a, , 1)", "1:14: expected an expression for argument 2 of ld_normal, found ','", ""},
	{"invalid UTF-8", "a + \xff", "1:5: invalid UTF-8 byte 0xff", "UTF-8"},
	{"invalid UTF-8 in a comment", "a # \xc3(\n", "1:5: invalid UTF-8 byte 0xc3", ""},
	{"NUL byte", "a +\x00 b", "1:4: unexpected NUL byte in the model text", ""},
	{"column counts runes", "μ + σ @", "1:7: unexpected character '@'", ""},
}

func TestParseInvalid(t *testing.T) {
	if len(invalidModels) < 40 {
		t.Fatalf("only %d error cases", len(invalidModels))
	}
	for _, tc := range invalidModels {
		t.Run(tc.name, func(t *testing.T) {
			m, err := Parse(tc.src)
			if err == nil {
				t.Fatalf("no error; model %s", dumpModel(m))
			}
			if m != nil {
				t.Errorf("a model returned with an error")
			}
			var list ErrorList
			if !errors.As(err, &list) || len(list) == 0 {
				t.Fatalf("error %v (%T), want a non-empty ErrorList", err, err)
			}
			if got := list[0].Error(); got != tc.err {
				t.Errorf("error\n%s\nwant\n%s", got, tc.err)
			}
			if !strings.Contains(list[0].Hint, tc.hint) {
				t.Errorf("hint %q does not contain %q", list[0].Hint, tc.hint)
			}
			checkErrorList(t, tc.src, list)
		})
	}
}

// checkErrorList checks what every error list must satisfy: sorted, at
// most maxErrors, positions inside the text and consistent with their
// offsets, lower-case messages, and a report that names each position.
func checkErrorList(t *testing.T, src string, list ErrorList) {
	t.Helper()
	if len(list) > maxErrors {
		t.Errorf("%d errors, at most %d wanted", len(list), maxErrors)
	}
	for i, e := range list {
		if i > 0 && list[i-1].Pos.Offset > e.Pos.Offset {
			t.Errorf("errors not sorted: %v before %v", list[i-1], e)
		}
		if e.Pos.Offset < 0 || e.Pos.Offset > len(src) {
			t.Errorf("%v: offset %d outside the text of %d bytes", e, e.Pos.Offset, len(src))
		} else if p := posAt(src, e.Pos.Offset); p != e.Pos {
			t.Errorf("%v: position %+v, offset gives %+v", e, e.Pos, p)
		}
		// Our wording is lower-case; a message may start with a name from
		// the model as the user wrote it.
		first, _, _ := strings.Cut(e.Msg, " ")
		if e.Msg == "" || (strings.ToLower(e.Msg[:1]) != e.Msg[:1] && !strings.Contains(src, first)) {
			t.Errorf("message %q should start in lower case", e.Msg)
		}
	}
	rep := list.Detail(src)
	for _, e := range list {
		if !strings.Contains(rep, e.Error()) {
			t.Errorf("report lacks %q:\n%s", e.Error(), rep)
		}
	}
}

// TestSeveralErrors checks that parsing goes on after an error, in order,
// and stops after ten.
func TestSeveralErrors(t *testing.T) {
	src := "a @ b\nx = (1 +\ny = 2\nc $ d\nq = [1,\n\nparam r in [0, 1"
	_, err := Parse(src)
	list, _ := err.(ErrorList)
	want := []string{
		"1:3: unexpected character '@'",
		"2:9: expected an expression after '+', found end of line",
		"4:3: unexpected character '$'",
		"5:8: expected an expression for a vector element, found end of line",
		"7:17: expected ']' to close '[' at 7:12, found end of input",
	}
	var got []string
	for _, e := range list {
		got = append(got, e.Error())
	}
	if strings.Join(got, "\n") != strings.Join(want, "\n") {
		t.Errorf("errors\n%s\nwant\n%s", strings.Join(got, "\n"), strings.Join(want, "\n"))
	}
	if s := err.Error(); s != "1:3: unexpected character '@' (and 4 more errors)" {
		t.Errorf("Error() = %q", s)
	}

	// Check errors also go on after the first.
	src = "x = 1\nx = 2\nld_normal(a) + exp(b, c)\n"
	_, err = Parse(src)
	list, _ = err.(ErrorList)
	if len(list) != 3 || list[1].Pos.Line != 3 || list[2].Pos.Col != 16 {
		t.Errorf("errors %v", list)
	}

	// Never more than ten.
	_, err = Parse(strings.Repeat("a @ b\n", 30))
	list, _ = err.(ErrorList)
	if len(list) != maxErrors {
		t.Errorf("%d errors, want %d", len(list), maxErrors)
	}
}

func TestDetail(t *testing.T) {
	cases := []struct{ src, want string }{
		{
			"x = 1\n  y = (a +\tb\nz = 2\n",
			"2:13: expected ')' to close '(' at 2:7, found end of line\n" +
				"      y = (a +\tb\n" +
				"    " + strings.Repeat(" ", 10) + "\t ^\n",
		},
		{
			// Tabs before the column are kept so that the caret lines up.
			"\tld_normal(a)\n",
			"1:2: wrong number of arguments for ld_normal: got 1, want 3\n" +
				"    \tld_normal(a)\n" +
				"    \t^\n" +
				"hint: ld_normal takes 3 arguments (x, mean, sd), got 1\n",
		},
		{
			// Columns count runes, not bytes.
			"μ + σ @",
			"1:7: unexpected character '@'\n" +
				"    μ + σ @\n" +
				"          ^\n",
		},
		{
			// Invalid bytes are shown as U+FFFD, one column each.
			"a + \xff b",
			"1:5: invalid UTF-8 byte 0xff\n" +
				"    a + \uFFFD b\n" +
				"        ^\n" +
				"hint: the model text must be UTF-8\n",
		},
	}
	for _, tc := range cases {
		_, err := Parse(tc.src)
		if err == nil {
			t.Errorf("%q: no error", tc.src)
			continue
		}
		if got := Detail(err, tc.src) + "\n"; got != tc.want {
			t.Errorf("%q: report\n%s\nwant\n%s", tc.src, got, tc.want)
		}
	}
}

func TestSuggest(t *testing.T) {
	cases := []struct {
		name string
		want string
	}{
		{"logsumexpp", "logsumexp"},
		{"lgama", "lgamma"},
		{"sqr", "sqrt"},
		{"EXP", "exp"},
		{"gamma", "lgamma, digamma, ld_gamma"},
		{"qq", ""},
	}
	for _, tc := range cases {
		if got := strings.Join(suggest(tc.name, FuncNames()), ", "); got != tc.want {
			t.Errorf("suggest(%q) = %q, want %q", tc.name, got, tc.want)
		}
	}
	// Levenshtein distances worked by hand.
	for _, d := range []struct {
		a, b string
		n    int
	}{{"kitten", "sitting", 3}, {"", "abc", 3}, {"abc", "abc", 0}, {"μσ", "σ", 1}, {"flaw", "lawn", 2}} {
		if got := editDistance(d.a, d.b); got != d.n {
			t.Errorf("editDistance(%q, %q) = %d, want %d", d.a, d.b, got, d.n)
		}
	}
}
