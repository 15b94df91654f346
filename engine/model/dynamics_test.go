package model

import (
	"errors"
	"os"
	"strings"
	"testing"
)

// dynamicsModels are valid models with indexing, functions and blocks,
// with the shape of a definition each must give.
var dynamicsModels = []struct {
	name, src, def string
	length         int
}{
	{"element", "y = [1, 2, 3]\nv = y[2]\na*v", "v", 0},
	{"last element by len", "y = [1, 2, 3]\nv = y[len(y)]\na*v", "v", 0},
	{"positions", "y = [1, 2, 3]\nidx = [3, 1]\nv = y[idx]\nsum(v*a)", "v", 2},
	{"position literal", "y = [1, 2, 3]\nv = y[[1, 1, 2]]\nsum(v*a)", "v", 3},
	{"slice", "y = [1, 2, 3, 4]\nv = y[2:4]\nsum(v*a)", "v", 3},
	{"index of a computed vector", "t = [1, 2, 3]\nv = (a*t)[2]\nv", "v", 0},
	{"index then power", "y = [1, 2]\nv = y[2]^a\nv", "v", 0},
	{"function", "sq(u) = u^2\nv = sq(a - 1)\n-v", "v", 0},
	{"function of a vector", "y = [1, 2, 3]\nss(u, m) = sum((u - m)^2)\nv = ss(y, a)\n-v", "v", 0},
	{"function calling one above", "sq(u) = u^2\nnorm2(p, q) = sq(p) + sq(q)\nv = norm2(a, b)\n-v", "v", 0},
	{"function returning a vector", "y = [1, 2, 3]\nsh(u) = u - 1\nv = sh(y*a)\nsum(v)", "v", 3},
	{"recurrence", "repeat 5 as k\n  x = 1 then r*x*(1 - x)\nend\nv = x\nsum(v)", "v", 5},
	{"recurrence with quantities", "u = [1, 0, 1]\nrepeat 3 as k\n  f = u[k]*b\n  x = a then x + f\nend\nsum(x)", "x", 3},
	{"recurrence without step name", "repeat 4\n  x = a then x/2\n  y = 0 then y + x\nend\nsum(y)", "y", 4},
	{"ode", "tt = [0.5, 1, 2]\node tt from 0 substeps 4 as t\n  x = a rate -b*x + sin(t)\nend\nsum(x)", "x", 3},
	{"ode of a scalar time", "ode 1 from 0 substeps 10\n  x = 1 rate -a*x\nend\nx[1]", "x", 1},
	{"ode with a quantity", "tt = [1, 2]\node tt from 0 substeps 2\n  s = x + y\n  x = 1 rate -a*s\n  y = 0 rate s\nend\nsum(x*y)", "y", 2},
	{"bound from an element", "y = [1, 2, 3]\nparam a in [y[1], y[3]]\nv = a*y[2]\nv", "v", 0},
	{"bound from a definition of an element", "y = [1, 2, 3]\nlo = y[1]\nparam a in [lo, 5]\nv = a\nv", "v", 0},
	{"words stay free as names", "repeat = 2\nend = 3\nthen = 1\nrepeat*a + end + then", "end", 0},
	{"block on one line with ;", "repeat 2; x = a then x + 1; end\nsum(x)", "x", 2},
}

func TestParseDynamics(t *testing.T) {
	for _, tc := range dynamicsModels {
		t.Run(tc.name, func(t *testing.T) {
			m, err := Parse(tc.src)
			if err != nil {
				t.Fatalf("%v", Detail(err, tc.src))
			}
			checkComplete(t, m)
			roundTrip(t, m)
			found := false
			for _, d := range m.Defs {
				if d.Name == tc.def {
					found = true
					if d.Shape.Len != tc.length {
						t.Errorf("%s has %d elements, want %d", d.Name, d.Shape.Len, tc.length)
					}
				}
			}
			if !found {
				t.Errorf("no definition %s", tc.def)
			}
		})
	}
}

// dynamicsErrors lists what people type that the language does not have,
// or gets wrong, with the first error and a part of its hint.
var dynamicsErrors = []struct {
	name, src, err, hint string
}{
	{"for loop", "for i in 1:10\n  a + i", "1:1: the model language has no for loop", "repeat block"},
	{"for loop in parentheses", "for (i in 1:10) a", "1:1: the model language has no for loop", "repeat"},
	{"while loop", "while x\na", "1:1: the model language has no while loop", "repeat"},
	{"dangling plus", "y = [1, 2]\na +\n  y[2]", "2:4: expected an expression after '+', found end of line", "put it in parentheses"},
	{"dangling times at the end", "a *", "1:4: expected an expression after '*', found end of input", "parentheses"},
	{"assign an element", "y = [1, 2]\ny[2] = 3\na", "2:6: unexpected '=': only a name can be defined", "define the whole vector"},
	{"index a parameter", "a[2] + b", "1:2: cannot index: a is a parameter, a scalar", "only vectors"},
	{"index a number", "y = 2\ny[1]*a", "2:2: cannot index: y is a scalar", ""},
	{"index zero", "y = [1, 2]\ny[0]*a", "2:3: the index is 0, outside the 2 elements of y (1 to 2)", "the first element is v[1]"},
	{"index too large", "y = [1, 2]\ny[3]*a", "2:3: the index is 3, outside the 2 elements of y (1 to 2)", ""},
	{"index not whole", "y = [1, 2]\ny[1.5]*a", "2:3: the index is 1.5, not a whole number", ""},
	{"index by a parameter", "y = [1, 2]\ny[a]", "2:3: an index cannot depend on the parameters", "known before the analysis"},
	{"position vector out of range", "y = [1, 2]\nsum(y[[1, 5]])*a", "2:7: position 2 of the index is 5, outside the 2 elements of y (1 to 2)", ""},
	{"backwards slice", "y = [1, 2, 3]\nsum(y[3:2])*a", "2:6: empty slice: it starts at 3 and ends at 2", ""},
	{"two indices", "y = [1, 2, 3]\ny[1, 2]*a", "2:4: expected ']' to close '[' at 2:2, found ','", "v[[1, 3]]"},
	{"empty index", "y = [1, 2]\ny[]*a", "2:3: empty index", "v[2]"},
	{"step index out of range", "y = [1, 2, 3]\nrepeat 3 as k\n  x = 1 then x + a*y[k+1]\nend\nsum(x)", "3:22: the index is 4 at step 3, outside the 3 elements of y (1 to 3)", ""},
	{"bound indexed by a parameter", "y = [1, 2]\nparam a in [y[b], 2]\na*b", "2:15: an index cannot depend on the parameters", ""},
	{"index by an undefined name", "y = [1, 2]\nsum(y[i])*a", "2:7: an index cannot depend on the parameters", "i is not defined, so it is a parameter"},
	{"comprehension", "y = [1, 2]\nsum(y[i] for i in 1:2)", "2:10: expected ',' or ')' to close '(' at 2:4, found name for", "no comprehensions"},
	{"prime for a derivative", "x' = -a*x\na", "1:2: unexpected character U+0027", "ode block"},
	{"recursion", "f(x) = f(x - 1)\nf(a)", "1:8: f calls itself: functions cannot be recursive", "repeat block"},
	{"mutual recursion", "f(x) = g(x)\ng(x) = f(x)\ng(a)", "1:8: g is defined at line 2, below f; a function may call only functions defined above it", "move the definition"},
	{"function arity", "f(x, y) = x*y\nf(a)", "2:1: wrong number of arguments for f: got 1, want 2", "f(x, y)"},
	{"function name taken", "exp(x) = x\nexp(a)", "1:1: cannot define exp: it is the name of a function", ""},
	{"function argument twice", "f(x, x) = x\nf(a, a)", "1:6: argument x appears twice in the definition of f", ""},
	{"function uses a later definition", "f(x) = x + c\nc = 2\nf(a)", "1:12: c is defined at line 2, below the function", ""},
	{"block without end", "repeat 3\n  x = a then x + 1\nsum(x)", "1:1: the repeat block has no end", "end"},
	{"end alone", "a\nend", "2:1: end without a block to close", ""},
	{"steps depend on a parameter", "repeat a\n  x = 1 then x\nend\nsum(x)", "1:8: the number of steps cannot depend on the parameters", ""},
	{"steps not whole", "repeat 2.5\n  x = a then x\nend\nsum(x)", "1:8: the number of steps is 2.5", "whole number"},
	{"no component", "repeat 2\n  q = a\nend\na", "1:1: the repeat block has no state component", "then"},
	{"rate in repeat", "repeat 2\n  x = a rate x\nend\nsum(x)", "2:9: rate belongs in an ode block", "then"},
	{"then in ode", "ode 1 from 0 substeps 2\n  x = a then x\nend\nsum(x)", "2:9: then belongs in a repeat block", "rate"},
	{"start uses the state", "repeat 2\n  x = y then x\n  y = a then y\nend\nsum(x)", "2:7: y is a line of this block (line 3); it has no value before the first step", "above the block"},
	{"vector component", "y = [1, 2]\nrepeat 2\n  x = a then x + y\nend\nsum(x)", "3:14: the then rule of x is a vector of 2 elements", "scalar"},
	{"times not increasing", "tt = [1, 0.5]\node tt from 0 substeps 2\n  x = a rate -x\nend\nsum(x)", "2:5: output time 2 is 0.5, after 1", "increase"},
	{"ode header without from", "ode tt substeps 2\n  x = a rate -x\nend", "1:8: expected from in the ode line, found name substeps", "ode TIMES from T0"},
	{"local name taken", "k = 2\nrepeat 2 as k\n  x = a then x*k\nend\nsum(x)", "2:13: k is defined at line 1", ""},
	{"component defined twice", "x = 1\nrepeat 2\n  x = a then x\nend\nsum(x)", "3:3: x is already defined at line 1", ""},
	{"too large", "ode 100 from 0 substeps 100000\n  x = a rate -x*x*x*x*x\nend\nx[1]", "1:1: this ode block makes the model too large: about 2800000 operations once unrolled, the limit is 300000", "fewer steps"},
}

func TestDynamicsErrors(t *testing.T) {
	for _, tc := range dynamicsErrors {
		t.Run(tc.name, func(t *testing.T) {
			m, err := Parse(tc.src)
			if err == nil {
				t.Fatalf("no error; model %s", dumpModel(m))
			}
			var list ErrorList
			if !errors.As(err, &list) || len(list) == 0 {
				t.Fatalf("error %v (%T), want a non-empty ErrorList", err, err)
			}
			if got := list[0].Error(); got != tc.err {
				t.Errorf("error\n%s\nwant\n%s\n(all: %v)", got, tc.err, list)
			}
			if !strings.Contains(list[0].Hint, tc.hint) {
				t.Errorf("hint %q does not contain %q", list[0].Hint, tc.hint)
			}
			checkErrorList(t, tc.src, list)
		})
	}
}

// Functions nested so that each doubles the work would expand to 2^30
// copies: the checker stops at the limit, quickly.
func TestExponentialExpansionRejected(t *testing.T) {
	var b strings.Builder
	b.WriteString("f0(x) = x + 1\n")
	for i := 1; i <= 30; i++ {
		b.WriteString("f" + itoa(i) + "(x) = f" + itoa(i-1) + "(f" + itoa(i-1) + "(x))\n")
	}
	b.WriteString("f30(a)\n")
	_, err := Parse(b.String())
	if err == nil || !strings.Contains(err.Error(), "too large") {
		t.Fatalf("error %v, want the model too large", err)
	}
}

// Elementwise work on a block's long states counts against the limit, so
// the error comes from the checker, with its place.
func TestUnrolledVectorWorkCounted(t *testing.T) {
	src := `repeat 100000
  x = a then x*0.5 + 1
end
sum(sin(x)*cos(x) + tan(x)*atan(x))`
	_, err := Parse(src)
	if err == nil || !strings.Contains(err.Error(), "4:1: the density makes the model too large") {
		t.Fatalf("error %v, want the density too large at 4:1", err)
	}
}

// A support may take elements of data: they are known before the analysis.
func TestBoundFromElements(t *testing.T) {
	m, err := Parse("y = [1, 2, 3]\nlo = y[1]\nparam a in [lo, y[len(y)]]\na")
	if err != nil {
		t.Fatal(err)
	}
	if p := m.Params[0]; p.Lo != 1 || p.Hi != 3 {
		t.Errorf("support [%g, %g], want [1, 3]", p.Lo, p.Hi)
	}
}

// The README's examples of blocks are models that parse.
func TestReadmeBlockExamples(t *testing.T) {
	b, err := os.ReadFile("../../README.md")
	if err != nil {
		t.Fatal(err)
	}
	var blocks []string
	var cur []string
	for _, line := range strings.Split(string(b), "\n") {
		if rest, ok := strings.CutPrefix(line, "    "); ok {
			cur = append(cur, rest)
			continue
		}
		if len(cur) > 0 {
			blocks = append(blocks, strings.Join(cur, "\n"))
			cur = nil
		}
	}
	found := 0
	for _, src := range blocks {
		if !strings.Contains(src, "\nend\n") {
			continue
		}
		found++
		if _, err := Parse(src); err != nil {
			t.Errorf("README example does not parse:\n%s\n%s", src, Detail(err, src))
		}
	}
	if found < 2 {
		t.Errorf("found %d README examples with a block, want 2", found)
	}
}
