package paramopt

import (
	"errors"
	"reflect"
	"strings"
	"testing"

	"bellcheck/engine"
	"bellcheck/engine/model"
)

const twoParams = "param s in [0, inf]\nparam p in [0, 1]\n-s + ld_beta(p, 2, 3) + m - m^2\n"

func parse(t *testing.T, src string) *model.Model {
	t.Helper()
	m, err := model.Parse(src)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

func f(v float64) *float64 { return &v }

// TestFlagsAndLinesAgree reads the same settings as flags and as setting
// lines: both give the same options, in the model's parameter order.
func TestFlagsAndLinesAgree(t *testing.T) {
	m := parse(t, twoParams)
	var fromFlags []Setting
	for _, fl := range []struct {
		k Kind
		v string
	}{{Scale, "s=log,p=logit"}, {Points, "m=201"}, {Box, "m=-5:5"}, {Box, "s=:40"}} {
		s, err := ParseFlag(fl.k, fl.v)
		if err != nil {
			t.Fatal(err)
		}
		fromFlags = append(fromFlags, s...)
	}
	fromLines, err := Lines("#@ scale s=log p=logit\n  #@ points m=201\n#@ box m=-5:5, s=:40\n" + twoParams)
	if err != nil {
		t.Fatal(err)
	}
	a, err := Options(m, fromFlags)
	if err != nil {
		t.Fatal(err)
	}
	b, err := Options(m, fromLines)
	if err != nil {
		t.Fatal(err)
	}
	want := engine.Options{Params: []engine.ParamOptions{
		{Scale: engine.Log, Hi: f(40)},
		{Scale: engine.Logit},
		{Points: 201, Lo: f(-5), Hi: f(5)},
	}}
	if !reflect.DeepEqual(a, want) || !reflect.DeepEqual(b, want) {
		t.Errorf("flags give %+v\nlines give %+v\nwant %+v", a, b, want)
	}
}

// TestWriteReadsBack checks that Write's lines read back to the same
// options, numbers bit for bit (shortest round-trip formatting).
func TestWriteReadsBack(t *testing.T) {
	m := parse(t, twoParams)
	opts := engine.Options{Params: []engine.ParamOptions{
		{Scale: engine.Log, Points: 99, Lo: f(0.1), Hi: f(1.0 / 3)},
		{},
		{Lo: f(-1e-300)},
	}}
	text := Write([]string{"s", "p", "m"}, opts)
	if want := "#@ scale s=log\n#@ points s=99\n#@ box s=0.1:0.3333333333333333 m=-1e-300:\n"; text != want {
		t.Errorf("Write:\n%s\nwant\n%s", text, want)
	}
	settings, err := Lines(text + twoParams)
	if err != nil {
		t.Fatal(err)
	}
	got, err := Options(m, settings)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(got, opts) {
		t.Errorf("read back %+v, want %+v", got, opts)
	}
	if Write([]string{"s"}, engine.Options{}) != "" {
		t.Error("Write of no options is not empty")
	}
}

// TestLaterSettingWins: flags given after a file's lines override them, a
// box side left out keeps the earlier one.
func TestLaterSettingWins(t *testing.T) {
	m := parse(t, twoParams)
	lines, _ := Lines("#@ points m=101\n#@ box m=-3:3\n")
	flags, _ := ParseFlag(Points, "m=201")
	box, _ := ParseFlag(Box, "m=:4")
	o, err := Options(m, append(append(lines, flags...), box...))
	if err != nil {
		t.Fatal(err)
	}
	if got := o.Params[2]; got.Points != 201 || *got.Lo != -3 || *got.Hi != 4 {
		t.Errorf("m: %+v, want 201 points and box [-3, 4]", got)
	}
}

// TestSyntaxErrors checks the messages for settings that cannot be read.
func TestSyntaxErrors(t *testing.T) {
	for _, tc := range []struct {
		k    Kind
		v    string
		want string
	}{
		{Scale, "s", `--scale: "s": want NAME=log`},
		{Scale, "s=logg", `unknown scale "logg": want identity, log or logit`},
		{Scale, "=log", "want NAME=log"},
		{Points, "s=7", "at least 8"},
		{Points, "s=1e3", "whole number"},
		{Box, "m=5", "want NAME=LO:HI"},
		{Box, "m=a:1", `lower side: "a" is not a finite number`},
		{Box, "m=0:inf", `upper side: "inf" is not a finite number`},
		{Box, "m=:", "at least one side"},
		{Box, "m=2:1", "lower side must be below"},
		{Box, "2m=0:1", `"2m" does not start with a letter`},
	} {
		_, err := ParseFlag(tc.k, tc.v)
		var e *Error
		if !errors.As(err, &e) || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("--%s %s: error %v, want one saying %q", tc.k, tc.v, err, tc.want)
		}
	}
}

// TestLineErrors checks that setting lines' errors are at their line and
// column in the model text.
func TestLineErrors(t *testing.T) {
	for _, tc := range []struct {
		src  string
		want string
	}{
		{"-x^2\n#@ scal x=log\n", `2:4: unknown setting "scal"`},
		{"-x^2\n\t#@\n", "2:4: empty setting line"},
		{"-x^2\n#@ box\n", "2:7: box needs at least one NAME=VALUE"},
		{"-x^2\n#@ points x=101  y=3\n", `2:18: "y=3": the points are a whole number, at least 8`},
		{"#@ box σ=1:0\n", `1:8: "σ=1:0": the box's lower side`},
	} {
		_, err := Lines(tc.src)
		if err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%q: error %v, want %q", tc.src, err, tc.want)
		}
	}
	// A comment that is not a setting line is left to the model.
	if s, err := Lines("# scale x=log\n-x^2 # @ box\n"); err != nil || len(s) != 0 {
		t.Errorf("plain comments: %v %v", s, err)
	}
}

// TestModelErrors checks settings that do not fit the model: an unknown
// name, a scale the support does not allow, too many points, a box outside
// the support.
func TestModelErrors(t *testing.T) {
	m := parse(t, twoParams)
	for _, tc := range []struct {
		line string
		want string
	}{
		{"#@ scale q=log", "1:10: q=log: the model has no parameter q (its parameters: s, p, m)"},
		{"#@ scale m=log", "the log scale needs a support [LO, inf] with a finite LO, but m is in [-inf, inf]"},
		{"#@ scale s=logit", "the logit scale needs a finite support"},
		{"#@ scale p=log", "the log scale needs"},
		{"#@ points m=204", "at most 203 points per parameter for a model of 3 parameters"},
		{"#@ box s=-1:2", "the box's lower side -1 is outside s's support [0, inf]"},
		{"#@ box p=:1.5", "the box's upper side 1.5 is outside p's support [0, 1]"},
		{"#@ box p=0.5:\n#@ box p=:0.25", "2:8: p=:0.25: the box [0.5, 0.25] is empty"},
	} {
		s, err := Lines(tc.line)
		if err != nil {
			t.Errorf("%q: %v", tc.line, err)
			continue
		}
		if _, err := Options(m, s); err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%q: error %v, want %q", tc.line, err, tc.want)
		}
	}
	// The engine's own check agrees on the limit of points (MaxAxisPoints).
	s, _ := Lines("#@ points m=203")
	if _, err := Options(m, s); err != nil {
		t.Errorf("203 points for 3 parameters: %v", err)
	}
}
