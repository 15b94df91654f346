package paramopt

import (
	"math"
	"reflect"
	"strings"
	"testing"

	"bellcheck/engine"
)

const corrNormal = "param x\nparam y\n-(x^2 + y^2)/2\n"

// A gaussian line with sds and a correlation gives the covariance
// Cov[i][j] = corr sd_i sd_j; the same candidate in cov form, or as a
// flag, gives the same; lines with the same name add up.
func TestCandidateForms(t *testing.T) {
	m := parse(t, corrNormal)
	want := []engine.Candidate{{Name: "mine", Mean: []float64{1, -2}, Cov: [][]float64{{0.25, 0.5 * 0.5 * 2}, {0.5 * 0.5 * 2, 4}}}}
	for _, src := range []string{
		"#@ gaussian mine mean.x=1 mean.y=-2 sd.x=0.5 sd.y=2 corr.x.y=0.5\n",
		"#@ gaussian mine mean.x=1, mean.y=-2\n  #@ gaussian mine sd.y=2 sd.x=0.5 corr.y.x=0.5\n",
		"#@ gaussian mine mean.x=1 mean.y=-2 cov.x.x=0.25 cov.y.y=4 cov.x.y=0.5\n",
	} {
		specs, err := CandidateLines(src + corrNormal)
		if err != nil {
			t.Fatalf("%q: %v", src, err)
		}
		got, err := Candidates(m, specs)
		if err != nil {
			t.Fatalf("%q: %v", src, err)
		}
		if !reflect.DeepEqual(got, want) {
			t.Errorf("%q: got %+v, want %+v", src, got, want)
		}
		// The other setting lines' reader passes gaussian lines by.
		if _, err := Lines(src); err != nil {
			t.Errorf("Lines: %v", err)
		}
	}
	spec, err := ParseCandidateFlag("mine mean.x=1 mean.y=-2 sd.x=0.5 sd.y=2 corr.x.y=0.5")
	if err != nil {
		t.Fatal(err)
	}
	got, err := Candidates(m, []CandidateSpec{spec})
	if err != nil || !reflect.DeepEqual(got, want) {
		t.Errorf("flag: %+v, %v", got, err)
	}
	// WriteCandidates reads back (to rounding of the correlation).
	specs, err := CandidateLines(WriteCandidates([]string{"x", "y"}, want))
	if err != nil {
		t.Fatal(err)
	}
	back, err := Candidates(m, specs)
	if err != nil {
		t.Fatal(err)
	}
	for i := range want[0].Cov {
		for j := range want[0].Cov[i] {
			if math.Abs(back[0].Cov[i][j]-want[0].Cov[i][j]) > 1e-15 {
				t.Errorf("read back %v", back[0].Cov)
			}
		}
	}
}

// Bad candidates name the line and column and say what is wrong.
func TestCandidateLineErrors(t *testing.T) {
	m := parse(t, corrNormal)
	for _, tc := range []struct{ src, want string }{
		{"#@ gaussian\n", "1:12: gaussian needs a name"},
		{"#@ gaussian mine\n", "1:17: gaussian mine needs its fields"},
		{"#@ gaussian mean.x=1\n", "1:13: \"mean.x=1\": a gaussian's first word is its name"},
		{"#@ gaussian laplace mean.x=1\n", "1:13: the candidate's name laplace is a fit method's"},
		{"#@ gaussian g mean.x=1 mode.x=2\n", "1:24: \"mode.x=2\": unknown field"},
		{"#@ gaussian g mean.x=one\n", "1:15: \"mean.x=one\": \"one\" is not a finite number"},
		{"#@ gaussian g mean.x=inf\n", "not a finite number"},
		{"#@ gaussian g corr.x=0.5\n", "corr takes 2 parameter name(s)"},
		{"#@ gaussian g mean.x=0 mean.y=0 sd.x=1 sd.y=-1\n", "1:40: \"sd.y=-1\": an sd must be positive"},
		{"#@ gaussian g mean.x=0 mean.y=0 sd.x=1 sd.y=1 corr.x.y=1\n", "a correlation must lie strictly between -1 and 1"},
		{"#@ gaussian g mean.x=0 mean.z=0\n", "1:24: \"mean.z=0\": the model has no parameter z"},
		{"#@ gaussian g mean.x=0 sd.x=1\n", "1:13: candidate g has no mean for y"},
		{"#@ gaussian g mean.x=0 mean.y=0 sd.x=1\n", "candidate g has no spread for y"},
		{"#@ gaussian g mean.x=0 mean.y=0 sd.x=1 cov.y.y=1\n", "mixes sd/corr with cov"},
		{"#@ gaussian g mean.x=0 mean.y=0 mean.x=1\n", "mean.x of candidate g is given twice"},
		// Singular: a covariance whose correlation is 1.
		{"#@ gaussian g mean.x=0 mean.y=0 cov.x.x=1 cov.y.y=4 cov.x.y=2\n", "1:13: candidate g: the correlation of y and x is 1"},
	} {
		specs, err := CandidateLines(tc.src)
		if err == nil {
			_, err = Candidates(m, specs)
		}
		if err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%q: error %v, want %q", tc.src, err, tc.want)
		}
	}
	m3 := parse(t, "param a\nparam b\nparam c\n-(a^2+b^2+c^2)/2\n")
	specs, _ := CandidateLines("\n#@ gaussian g mean.a=0 mean.b=0 mean.c=0 sd.a=1 sd.b=1 sd.c=1 corr.a.b=-0.6 corr.a.c=-0.6 corr.b.c=-0.6\n")
	if _, err := Candidates(m3, specs); err == nil || !strings.Contains(err.Error(), "2:13: candidate g: the covariance is singular or not positive definite") {
		t.Errorf("indefinite: %v", err)
	}
	if _, err := ParseCandidateFlag("g mean.x=zero"); err == nil || !strings.HasPrefix(err.Error(), "--gaussian: ") {
		t.Errorf("flag error %v", err)
	}
}

// vary lines and flags name a scalar constant and its range.
func TestVary(t *testing.T) {
	m := parse(t, "k = 2\nparam x\n-x^2/(2*k)\n")
	lines, err := Lines("#@ vary k=0.5:4\n")
	if err != nil {
		t.Fatal(err)
	}
	o, err := Options(m, lines)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(o.Vary, []engine.Vary{{Name: "k", Lo: 0.5, Hi: 4}}) {
		t.Errorf("vary %+v", o.Vary)
	}
	if w := Write([]string{"x"}, o); w != "#@ vary k=0.5:4\n" {
		t.Errorf("Write %q", w)
	}
	for _, tc := range []struct{ src, want string }{
		{"#@ vary k=1\n", "1:9: \"k=1\": want NAME=LO:HI"},
		{"#@ vary k=1:\n", "want NAME=LO:HI with two finite numbers"},
		{"#@ vary k=3:1\n", "lower end must be below"},
		{"#@ vary x=0:1\n", "1:9: x=0:1: x is a parameter, not a constant"},
		{"#@ vary q=0:1\n", "the model defines no constant q"},
	} {
		ls, err := Lines(tc.src)
		if err == nil {
			_, err = Options(m, ls)
		}
		if err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%q: %v, want %q", tc.src, err, tc.want)
		}
	}
}

// TextOptions reads every kind of setting line of a model text at once.
func TestTextOptions(t *testing.T) {
	src := "#@ scale s=log\n#@ vary k=1:3\n#@ gaussian g mean.s=1 sd.s=0.5\nk = 2\nparam s in [0, inf]\n-s*k\n"
	o, err := TextOptions(parse(t, src), src)
	if err != nil {
		t.Fatal(err)
	}
	if o.Params[0].Scale != engine.Log || len(o.Vary) != 1 || len(o.Candidates) != 1 || o.Candidates[0].Cov[0][0] != 0.25 {
		t.Errorf("options %+v", o)
	}
	if _, err := TextOptions(parse(t, "param x\n-x^2\n"), "param x\n#@ gaussian g mean.x=0\n-x^2\n"); err == nil || !strings.HasPrefix(err.Error(), "2:13: ") {
		t.Errorf("error %v, want one at 2:13", err)
	}
}
