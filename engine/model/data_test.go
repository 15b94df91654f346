package model

import (
	"errors"
	"math"
	"strings"
	"testing"
)

// TestParseWithSameAsText checks that attached data gives the same checked
// model as the same vectors defined at the top of the text (identity: the
// data are definitions before the first statement).
func TestParseWithSameAsText(t *testing.T) {
	const src = "param r in [0, inf]\nld_gamma(r, 2, 1) + sum(ld_poisson(k, r * w))\n"
	data := []Data{{Name: "k", Values: []float64{3, 5, 0}}, {Name: "w", Values: []float64{1, 0.5, 2}}}
	m, err := ParseWith(src, data)
	if err != nil {
		t.Fatal(err)
	}
	inline, err := Parse("k = [3, 5, 0]\nw = [1, 0.5, 2]\n" + src)
	if err != nil {
		t.Fatal(err)
	}
	got := dumpModel(m)
	want := dumpModel(inline)
	// The inline model's dump starts with its two definitions' statements.
	want = want[strings.Index(want, "\n")+1:]
	want = want[strings.Index(want, "\n")+1:]
	if got != want {
		t.Errorf("ParseWith:\n%s\ninline:\n%s", got, want)
	}
	if len(m.Stmts) != 2 {
		t.Errorf("Stmts has %d statements, want the text's 2", len(m.Stmts))
	}
	if Format(m) != Format(mustParse(t, src)) {
		t.Errorf("Format shows the data: %q", Format(m))
	}
	for i, d := range m.Defs {
		if d.IsData() != (i < 2) {
			t.Errorf("Defs[%d] %s: IsData %v", i, d.Name, d.IsData())
		}
	}
	if m.Source != src {
		t.Errorf("Source %q, want the text only", m.Source)
	}
}

func mustParse(t *testing.T, src string) *Model {
	t.Helper()
	m, err := Parse(src)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// TestParseWithClash checks that a name both in the data and in the text is
// an error at the text's line and column.
func TestParseWithClash(t *testing.T) {
	data := []Data{{Name: "y", Values: []float64{1, 2}}}
	for _, tc := range []struct {
		src       string
		line, col int
		msg       string
	}{
		{"a = 1\n  y = [3, 4]\n-sum((y - m)^2)", 2, 3, "y is a column of the attached data; it cannot also be defined"},
		{"param m\nparam y in [0, 1]\n-m^2 - y", 2, 7, "y is a column of the attached data; it cannot also be a parameter"},
	} {
		_, err := ParseWith(tc.src, data)
		var list ErrorList
		if !errors.As(err, &list) || len(list) != 1 {
			t.Errorf("%q: error %v, want one positioned error", tc.src, err)
			continue
		}
		if e := list[0]; e.Pos.Line != tc.line || e.Pos.Col != tc.col || !strings.Contains(e.Msg, tc.msg) {
			t.Errorf("%q: got %v, want %d:%d: %s", tc.src, e, tc.line, tc.col, tc.msg)
		}
	}
	// A data name used as a function, and the text's own errors, are
	// reported as usual.
	if _, err := ParseWith("-sum((y - m)^2) + lgama(m)", data); err == nil || !strings.Contains(err.Error(), "1:19: unknown function lgama") {
		t.Errorf("text error: %v", err)
	}
}

// TestParseWithBeyondTextLimit checks that data are not bound by the text's
// limit: 100000 values would be far more than MaxSource bytes as text.
func TestParseWithBeyondTextLimit(t *testing.T) {
	v := make([]float64, MaxVectorLen)
	for i := range v {
		v[i] = float64(i%7) + 0.125
	}
	m, err := ParseWith("-sum((y - m)^2)/2", []Data{{Name: "y", Values: v}})
	if err != nil {
		t.Fatal(err)
	}
	if got := m.Defs[0].Shape.Len; got != MaxVectorLen {
		t.Errorf("y has length %d, want %d", got, MaxVectorLen)
	}
}

// TestParseWithBadData checks the errors in the data themselves.
func TestParseWithBadData(t *testing.T) {
	long := make([]float64, MaxVectorLen+1)
	many := make([]Data, MaxDataValues/MaxVectorLen+1)
	for i := range many {
		many[i] = Data{Name: "v" + string(rune('a'+i)), Values: make([]float64, MaxVectorLen)}
	}
	for _, tc := range []struct {
		data []Data
		msg  string
	}{
		{[]Data{{Name: "2x", Values: []float64{1}}}, `"2x" does not start with a letter`},
		{[]Data{{Name: "exp", Values: []float64{1}}}, `"exp" is the name of a function`},
		{[]Data{{Name: "in", Values: []float64{1}}}, `"in" is a keyword`},
		{[]Data{{Name: "a b", Values: []float64{1}}}, `contains ' '`},
		{[]Data{{Name: "y", Values: []float64{1}}, {Name: "y", Values: []float64{2}}}, "y is given twice"},
		{[]Data{{Name: "y"}}, "y has no values"},
		{[]Data{{Name: "y", Values: []float64{1, math.NaN()}}}, "value 2 of y is NaN"},
		{[]Data{{Name: "y", Values: []float64{math.Inf(-1)}}}, "value 1 of y is -Inf"},
		{[]Data{{Name: "y", Values: long}}, "more than 100000"},
		{many, "more than 400000 values in all"},
	} {
		_, err := ParseWith("-m^2", tc.data)
		if !errors.Is(err, ErrData) || !strings.Contains(err.Error(), tc.msg) {
			t.Errorf("error %v, want ErrData saying %q", err, tc.msg)
		}
	}
}

// TestNameProblem checks the names data may have, against the scanner: a
// name is good exactly when it scans as one name token.
func TestNameProblem(t *testing.T) {
	for _, s := range []string{"x", "_a1", "σ", "μ_0", "k2", "sum", "pi", "param", "in", "cost", "1a", "a-b", "a b", "", "a\u200b", "x\u202e"} {
		errs := &errorSink{}
		toks := scanAll(s, errs)
		scansAsName := len(errs.list) == 0 && len(toks) == 2 && toks[0].kind == tokName && reservedName(s) == ""
		if got := NameProblem(s) == ""; got != scansAsName {
			t.Errorf("NameProblem(%q) = %q, but the scanner says name=%v", s, NameProblem(s), scansAsName)
		}
	}
}

// TestDataNameAsFunction: a data vector called as a function is named as
// the data's column, not as a definition on some line.
func TestDataNameAsFunction(t *testing.T) {
	_, err := ParseWith("-sum((y(2) - m)^2)", []Data{{Name: "y", Values: []float64{1, 2}}})
	if err == nil || err.Error() != "1:7: y is a column of the attached data, not a function" {
		t.Errorf("error %v", err)
	}
}
