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
		// s in [0, inf] is fitted on the log scale, where its bound 0 is
		// -inf: a box from 0 names a side the grid cannot place.
		{"box side on a log scale's bound", one, []ParamOptions{{}, {Lo: f(0), Hi: f(2)}}, "side 0 is the support's bound, infinitely far on the log scale"},
		{"the same box on the identity scale", one, []ParamOptions{{}, {Lo: f(0), Hi: f(2), Scale: Identity}}, ""},
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

// TestScaleOf: a bounded parameter with no scale named is fitted on its
// unconstrained scale, unless a candidate is given on the original scale;
// a named scale stands; an unbounded parameter is fitted as it is.
func TestScaleOf(t *testing.T) {
	m, err := model.Parse("param a\nparam s in [0, inf]\nparam p in [0, 1]\nparam u in [-inf, 3]\nld_normal(a, 0, 1) + ld_gamma(s, 2, 1) + ld_beta(p, 2, 2) - (u - 3)^2\n")
	if err != nil {
		t.Fatal(err)
	}
	want := []Scale{Identity, Log, Logit, Identity}
	for i := range m.Params {
		if got := ScaleOf(m, Options{}, i); got != want[i] {
			t.Errorf("%s: default %s, want %s", m.Params[i].Name, got, want[i])
		}
	}
	named := Options{Params: []ParamOptions{{}, {Scale: Identity}, {Scale: Logit}}}
	if got := ScaleOf(m, named, 1); got != Identity {
		t.Errorf("s named identity: %s", got)
	}
	cand := CandidateFromSD("mine", []float64{0, 2, 0.5, 2}, []float64{1, 1, 0.2, 1}, nil)
	withCand := Options{Candidates: []Candidate{cand}}
	for i := range m.Params {
		if got := ScaleOf(m, withCand, i); got != Identity {
			t.Errorf("%s with a candidate on the original scale: %s, want identity", m.Params[i].Name, got)
		}
	}
	if problems := CheckOptions(m, withCand); len(problems) != 0 {
		t.Errorf("the candidate on the original scale is refused: %v", problems)
	}
	cost, err := model.Parse("param s in [0, inf]\ncost (s - 2)^2\n")
	if err != nil {
		t.Fatal(err)
	}
	if got := ScaleOf(cost, Options{}, 0); got != Identity {
		t.Errorf("a cost's bounded parameter: %s, want identity", got)
	}
	cand.FittingScale = true
	if got := ScaleOf(m, Options{Candidates: []Candidate{cand}}, 1); got != Log {
		t.Errorf("s with a candidate on the fitting scale: %s, want log", got)
	}
}
