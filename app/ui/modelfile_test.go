package ui

import (
	"math"
	"reflect"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/share"
	"bellcheck/engine"
	"bellcheck/engine/data"
	"bellcheck/engine/model"
	"bellcheck/engine/paramopt"
)

// withLines is a model file with setting lines of every kind.
const withLines = `#@ scale s=log
#@ points m=301
#@ box m=-4:6
#@ vary k=0.5:3
#@ gaussian mine mean.m=1 mean.s=2 sd.m=0.5 sd.s=1 corr.m.s=0.2
param m
param s in [0, inf]
k = 2
ld_normal(m, 1, s) + ld_gamma(s, k, 1)
`

// The page reads a model's setting lines as the command line does: the
// options it analyses with are those paramopt gives for the same text (the
// command line's reading, wasm/cli_options.go).
func TestFileOptionsAsCommandLine(t *testing.T) {
	var s Session
	if !s.Edit(withLines) {
		t.Fatalf("Edit: %v", s.Errors)
	}
	m, err := model.Parse(withLines)
	if err != nil {
		t.Fatal(err)
	}
	lines, err := paramopt.Lines(withLines)
	if err != nil {
		t.Fatal(err)
	}
	want, err := paramopt.Options(m, lines)
	if err != nil {
		t.Fatal(err)
	}
	specs, _ := paramopt.CandidateLines(withLines)
	want.Candidates, err = paramopt.Candidates(m, specs)
	if err != nil {
		t.Fatal(err)
	}
	want.Plots = true
	if got := s.Options(); !reflect.DeepEqual(got, want) {
		t.Errorf("page options %+v, want the command line's %+v", got, want)
	}
	// A choice on the page overrides the line, field by field, as a flag does.
	lo := -2.0
	s.SetParam("m", engine.ParamOptions{Lo: &lo})
	s.SetParam("s", engine.ParamOptions{Scale: engine.Identity})
	got := s.Options()
	if p := got.Params[0]; p.Points != 301 || *p.Lo != -2 || *p.Hi != 6 {
		t.Errorf("m: points %d box [%v, %v], want 301 [-2, 6]", p.Points, *p.Lo, *p.Hi)
	}
	if sc := got.Params[1].Scale; sc != engine.Identity {
		t.Errorf("s: scale %q, want the identity chosen on the page", sc)
	}
}

// A setting line's problem is an editor error at its place.
func TestFileOptionErrorPlaced(t *testing.T) {
	var s Session
	if s.Edit("param m\n#@ scale m=log\n-m^2/2\n") {
		t.Fatal("a log scale on an unbounded parameter was accepted")
	}
	if len(s.Errors) != 1 || s.Errors[0].Pos.Line != 2 {
		t.Fatalf("errors %v, want one on line 2", s.Errors)
	}
}

// Attached columns are vectors of the model: the posterior of a normal
// mean with known sd 1 under a flat prior is centred on the data's mean
// (closed form: the likelihood is a normal in m with mean ybar).
func TestSessionData(t *testing.T) {
	var s Session
	src := "param m\nsum(ld_normal(y, m, 1))\n"
	if s.Edit(src) && len(s.Model.Params) == 1 {
		t.Fatal("y was read as data with none attached")
	}
	tb, err := data.Parse("y\tz\n1\t9\n2\t9\n6\t9\n")
	if err != nil {
		t.Fatal(err)
	}
	s.Data = tb
	if !s.Edit(src) {
		t.Fatalf("Edit with data: %v", s.Errors)
	}
	if len(s.Model.Params) != 1 {
		t.Fatalf("parameters %d, want 1 (y is data)", len(s.Model.Params))
	}
	res, err := engine.Analyse(t.Context(), s.Model, s.Options(), nil)
	if err != nil {
		t.Fatal(err)
	}
	if got := res.Exact.Mean[0]; math.Abs(got-3) > 1e-4 {
		t.Errorf("exact mean %v, want ybar = 3", got)
	}
	// The stored form reads back to the same table.
	back, err := data.Parse(tb.CSV())
	if err != nil || !reflect.DeepEqual(back.Columns[0].Values, tb.Columns[0].Values) {
		t.Errorf("CSV round trip: %v", err)
	}
}

// A box the analysis does not use is not shown in the fields: a start
// above the end is dropped, a side beyond the support clipped.
func TestShownOptionsAreUsed(t *testing.T) {
	var s Session
	if !s.Edit("param s in [0, inf]\nld_gamma(s, 2, 1)\n") {
		t.Fatal(s.Errors)
	}
	lo, hi := 5.0, 3.0
	s.SetParam("s", engine.ParamOptions{Lo: &lo, Hi: &hi})
	if o := shownOptions(&s)[0]; o.Lo != nil || o.Hi != nil {
		t.Errorf("box [5, 3] shown as [%v, %v], want blank (automatic)", o.Lo, o.Hi)
	}
	lo = -1
	s.SetParam("s", engine.ParamOptions{Lo: &lo})
	if o := shownOptions(&s)[0]; o.Lo == nil || *o.Lo != 0 {
		t.Errorf("lower side -1 of [0, inf] shown as %v, want 0", o.Lo)
	}
	if !strings.Contains(ParamViews(&s)[0].Name, "s") {
		t.Error("ParamViews lost the parameter")
	}
}

// A cost model's modes table shows the cost J: for J = (x-1)^2/2 + 3 the
// mode is x = 1 with J = 3 (closed form).
func TestModesShowCost(t *testing.T) {
	var s Session
	if !s.Edit("param x\ncost (x - 1)^2/2 + 3\n") {
		t.Fatal(s.Errors)
	}
	res, err := engine.Analyse(t.Context(), s.Model, s.Options(), nil)
	if err != nil {
		t.Fatal(err)
	}
	if res.Form != "cost" || len(res.Modes) == 0 {
		t.Fatalf("form %q, %d modes", res.Form, len(res.Modes))
	}
	if got := modeValue(res.Modes[0], true); got != "3" && got != "3.0000" {
		t.Errorf("cost at the mode shown as %q, want 3", got)
	}
}

// A slider's value reaches the analysis through model.WithConstant; a new
// text forgets it.
func TestLiveConstantRuns(t *testing.T) {
	var s Session
	src := "#@ vary k=0.5:4\nparam x in [0, inf]\nk = 2\nld_gamma(x, k, 1)\n"
	if !s.Edit(src) {
		t.Fatal(s.Errors)
	}
	items := s.liveItems()
	if len(items) != 1 || items[0].Value != 2 || items[0].Lo != 0.5 || items[0].Hi != 4 {
		t.Fatalf("live items %+v, want k = 2 in [0.5, 4]", items)
	}
	s.Constants = map[string]float64{"k": 3.5}
	run, ok := s.Begin(time.Now())
	if !ok {
		t.Fatal("Begin refused")
	}
	if v, err := run.Model.Constant("k"); err != nil || v != 3.5 {
		t.Errorf("the run's k = %v (%v), want 3.5", v, err)
	}
	res, err := engine.Analyse(t.Context(), run.Model, run.Options, nil)
	if err != nil {
		t.Fatal(err)
	}
	// Gamma(shape 3.5, rate 1) has mean 3.5 (closed form).
	if got := res.Exact.Mean[0]; math.Abs(got-3.5) > 1e-3 {
		t.Errorf("exact mean %v with k = 3.5, want 3.5", got)
	}
	s.Edit(src + "# changed\n")
	if s.Constants != nil {
		t.Error("a new text kept the slider's value")
	}
}

// Data up to share.MaxData of CSV goes into the link; beyond it the link
// holds the model alone and the panel says so.
func TestDataInLinkUpToLimit(t *testing.T) {
	p := NewPage()
	var b strings.Builder
	b.WriteString("y\n")
	for i := 0; b.Len() <= share.MaxData; i++ {
		b.WriteString(strconv.Itoa(100000+i) + "\n")
	}
	big, err := data.Parse(b.String())
	if err != nil {
		t.Fatal(err)
	}
	p.setData(big, "big.csv")
	if v := p.dataView(); v.InLink || v.CSVBytes <= share.MaxData {
		t.Errorf("a table of %d bytes: InLink %v", v.CSVBytes, v.InLink)
	}
	if st := p.shareState(); st.Data != "" {
		t.Errorf("the link carries %d bytes of data beyond the limit", len(st.Data))
	}
	small, _ := data.Parse("y\n1\n2\n")
	p.setData(small, "pasted columns")
	if st := p.shareState(); st.Data != "y\n1\n2\n" {
		t.Errorf("the link carries %q, want the small table", st.Data)
	}
	if !p.dataView().InLink {
		t.Error("a small table is said not to travel in the link")
	}
}

// The scale chooser shows each parameter's default where nothing names a
// scale (log for [0, inf], logit for [0, 1], as it is for a cost's bounded
// parameter), the file's line where it names one, and the page's choice
// over both.
func TestScaleChooserShowsTheDefault(t *testing.T) {
	selected := func(src string, choose map[string]engine.Scale) []string {
		var s Session
		if !s.Edit(src) {
			t.Fatal(s.Errors)
		}
		for name, sc := range choose {
			s.SetParam(name, engine.ParamOptions{Scale: sc})
		}
		html := app.HTMLString(&ParamPanel{Params: ParamViews(&s)})
		var out []string
		for _, part := range strings.Split(html, "<option")[1:] {
			// The attributes come in any order; a false one is written
			// selected="false".
			tag := part[:strings.Index(part, ">")] + " "
			if strings.Contains(tag, " selected ") || strings.Contains(tag, ` selected="true"`) {
				v := part[strings.Index(part, `value="`)+7:]
				out = append(out, v[:strings.Index(v, `"`)])
			}
		}
		return out
	}
	src := "param a\nparam s in [0, inf]\nparam p in [0, 1]\nld_normal(a, 0, 1) + ld_gamma(s, 2, 1) + ld_beta(p, 2, 2)\n"
	if got := strings.Join(selected(src, nil), " "); got != "identity log logit" {
		t.Errorf("defaults shown %q, want identity log logit", got)
	}
	if got := strings.Join(selected("#@ scale s=identity\n"+src, nil), " "); got != "identity identity logit" {
		t.Errorf("with the file's line %q, want identity identity logit", got)
	}
	if got := strings.Join(selected("#@ scale s=identity\n"+src, map[string]engine.Scale{"s": engine.Log, "p": engine.Identity}), " "); got != "identity log identity" {
		t.Errorf("with choices %q, want identity log identity", got)
	}
	if got := strings.Join(selected("param s in [0, inf]\ncost (s - 2)^2\n", nil), " "); got != "identity" {
		t.Errorf("a cost's bounded parameter %q, want identity", got)
	}
}

// The plots' legend says which fits have no curve: the Weibull model's
// reverse-KL fits do not exist (log p falls faster than any exponential
// along log k), so their entries read "(none)" and are muted; the others
// read as their names.
func TestLegendMarksAbsentFits(t *testing.T) {
	var s Session
	if !s.Edit("t = [410, 620, 780, 950, 1210, 1530]\nparam k in [0, inf]\nparam lam in [0, inf]\n" +
		"sum(log(k) - log(lam) + (k - 1)*log(t/lam) - (t/lam)^k) + ld_lognormal(k, 0, 1) + ld_lognormal(lam, 7, 1)\n") {
		t.Fatal(s.Errors)
	}
	res, err := engine.Analyse(t.Context(), s.Model, s.Options(), nil)
	if err != nil {
		t.Fatal(err)
	}
	pp := &PlotPanel{}
	html := app.HTMLString(pp.legend(BuildFigures(res, View{})))
	for _, want := range []string{"reverse KL (none)", "mean-field (none)", "legend-absent"} {
		if !strings.Contains(html, want) {
			t.Errorf("the legend lacks %q", want)
		}
	}
	for _, absent := range []string{"Laplace (none)", "EP (none)", "exact (none)"} {
		if strings.Contains(html, absent) {
			t.Errorf("the legend says %q", absent)
		}
	}
}
