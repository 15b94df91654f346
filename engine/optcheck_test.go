package engine

import (
	"strings"
	"testing"

	"bellcheck/engine/model"
)

func TestCheckOptions(t *testing.T) {
	f := func(v float64) *float64 { return &v }
	one, _ := model.Parse("param x\nparam s in [0, inf]\n-x^2/2 - s")
	four, _ := model.Parse("param a\nparam b\nparam c\nparam d\n-a^2-b^2-c^2-d^2")
	cases := []struct {
		name string
		m    *model.Model
		o    []ParamOptions
		want string // "" for no problem
	}{
		{"defaults", one, nil, ""},
		{"usable", one, []ParamOptions{{Points: 1501, Lo: f(-3), Hi: f(3)}, {Scale: Log}}, ""},
		// MaxAxisPoints(2) = 1501 and MaxAxisPoints(4) = 53 (limits.go).
		{"points over the 2-D cap", one, []ParamOptions{{Points: 4001}}, "1 to 1501"},
		{"points over the 4-D cap", four, []ParamOptions{{}, {}, {Points: 54}}, "1 to 53"},
		{"negative points", one, []ParamOptions{{Points: -1}}, "-1 grid points"},
		{"unknown scale", one, []ParamOptions{{Scale: "sqrt"}}, "unknown scale"},
		{"log on an unbounded parameter", one, []ParamOptions{{Scale: Log}}, "does not suit"},
		{"box outside the support", one, []ParamOptions{{}, {Lo: f(-1)}}, "outside the support"},
		{"empty box", one, []ParamOptions{{Lo: f(2), Hi: f(1)}}, "is empty"},
		// 2e308 overflows a double (the largest is about 1.8e308).
		{"box wider than a double", one, []ParamOptions{{Lo: f(-1e308), Hi: f(1e308)}}, "wider than"},
		{"box too narrow", one, []ParamOptions{{Lo: f(1), Hi: f(1 + 1e-15)}}, "too narrow"},
		{"too many settings", one, []ParamOptions{{}, {}, {}}, "options for 3 parameters"},
	}
	for _, c := range cases {
		got := CheckOptions(c.m, Options{Params: c.o})
		if c.want == "" {
			if len(got) != 0 {
				t.Errorf("%s: problems %v", c.name, got)
			}
			continue
		}
		if len(got) != 1 || !strings.Contains(got[0].Error(), c.want) {
			t.Errorf("%s: problems %v, want one containing %q", c.name, got, c.want)
		}
	}
}

// TestCheckOptionsAgreesWithAnalyse: what CheckOptions passes, Analyse
// accepts; what it refuses as over the limits, Analyse refuses too.
func TestCheckOptionsAgreesWithAnalyse(t *testing.T) {
	m, _ := model.Parse("param x\nparam y\n-x^2/2-y^2/2")
	for _, o := range []ParamOptions{{Points: 1501}, {Points: 1502}, {Scale: Log}} {
		problems := CheckOptions(m, Options{Params: []ParamOptions{o}})
		_, err := Analyse(t.Context(), m, Options{Params: []ParamOptions{o, {Points: 9}}}, nil)
		if (len(problems) == 0) != (err == nil) {
			t.Errorf("%+v: CheckOptions %v, Analyse %v", o, problems, err)
		}
	}
}
