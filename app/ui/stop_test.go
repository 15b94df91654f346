package ui

import (
	"context"
	"math"
	"slices"
	"strings"
	"testing"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/share"
	"bellcheck/engine"
	"bellcheck/engine/model"
)

// A page left (the tab closed, another page opened) right after typing:
// the edit waits for CheckDelay and PersistDelay, timers that never fire
// in a page that is gone, so flushPending (called on pagehide and on the
// document hidden) writes it at once.
func TestLeavingRightAfterTypingKeepsTheEdit(t *testing.T) {
	b := newMemBrowser("")
	h, e := openWith(t, b)
	h.page.Input(h.ctx, srcA)
	if got := kept(b); len(got) != 0 {
		t.Fatalf("before the delays the history already holds %q: the test would not tell", got)
	}
	h.page.flushPending() // pagehide
	if got := kept(b); len(got) != 1 || got[0] != srcA {
		t.Fatalf("leaving at once kept %q, want the text typed", got)
	}
	// Reopening the bare address brings it back.
	b.frag = ""
	h2, _ := openWith(t, b)
	if h2.page.text != srcA {
		t.Errorf("after reopening: %q", h2.page.text)
	}
	// The delayed check goes on normally when the page was only hidden.
	e.ConsumeAll()
	if got := kept(b); len(got) != 1 || got[0] != srcA {
		t.Errorf("after the delays the history holds %q", got)
	}
	// Nothing pending: nothing written.
	before := len(b.items)
	h.page.flushPending()
	if len(b.items) != before {
		t.Errorf("a flush with nothing pending wrote to the storage")
	}
}

func TestStopCancelsTheAnalysisAndSaysSo(t *testing.T) {
	started := make(chan struct{}, 4)
	stopped := make(chan struct{}, 4)
	slow := true
	h, e := mount(t, func(ctx context.Context, m *model.Model, o engine.Options, pr engine.ProgressFunc) (*engine.Result, error) {
		if slow {
			started <- struct{}{}
			<-ctx.Done()
			stopped <- struct{}{}
			return nil, ctx.Err()
		}
		return resultFor(m), nil
	})
	p := h.page
	p.text = srcA
	p.check(h.ctx)
	<-started
	if out := app.HTMLString(&RunStatus{Host: p, Run: p.runState()}); strings.Contains(out, StopID) {
		t.Errorf("a Stop button before the analysis has run for ProgressDelay")
	}
	p.progress = true // ProgressDelay has passed
	p.s.Progress = engine.Progress{Stage: "grid", Fraction: 0.4}
	if out := app.HTMLString(&RunStatus{Host: p, Run: p.runState()}); !strings.Contains(out, `id="`+StopID+`"`) || !strings.Contains(out, "bc-progress") {
		t.Fatalf("no Stop button beside the progress bar: %s", out)
	}
	p.StopAnalysis(h.ctx)
	<-stopped // the analysis's context was cancelled
	e.ConsumeAll()
	if p.s.Running || p.OutputState() != StateStopped {
		t.Errorf("after Stop: running %v, state %q", p.s.Running, p.OutputState())
	}
	if !strings.Contains(p.notice.Text, "You stopped the analysis") || !strings.Contains(p.notice.Text, "40 %") {
		t.Errorf("the notice says %q", p.notice.Text)
	}
	if p.text != srcA || p.s.Model == nil {
		t.Errorf("the text changed: %q", p.text)
	}
	out := app.HTMLString(&RunStatus{Host: p, Run: p.runState()})
	if !strings.Contains(out, "stopped after") || !strings.Contains(out, RunAgainID) {
		t.Errorf("the status line after Stop: %s", out)
	}
	// Run again: the analysis runs and its result is shown.
	slow = false
	p.RunAgain(h.ctx)
	e.ConsumeAll()
	if p.OutputState() != StateReady || p.notice.Text != "" {
		t.Errorf("after Run again: state %q, notice %q", p.OutputState(), p.notice.Text)
	}
}

// An embed link with settings the engine refuses: they are set back to
// their defaults, and the embed view's notice says which and why, as the
// full page's does (it used to reset them silently).
func TestEmbedLinkOverLimitSaysSo(t *testing.T) {
	two := "param a\nparam b\nld_normal(a, 0, 1) + ld_normal(b, 1, 2)\n"
	f, err := share.Encode(share.State{Model: two, Params: []engine.ParamOptions{{Points: 4001}}, View: share.View{Embed: true}})
	if err != nil {
		t.Fatal(err)
	}
	b := newMemBrowser(f)
	h, e := openWith(t, b)
	p := h.page
	if !p.mode.Embed || p.s.Param("a").Points != 0 {
		t.Fatalf("mode %+v, points of a %d (want the default)", p.mode, p.s.Param("a").Points)
	}
	// engine.MaxAxisPoints(2) is 1501: the engine's own limit.
	if !p.notice.Warn || !strings.Contains(p.notice.Text, "1 to 1501") || !strings.Contains(p.notice.Text, "defaults are used") {
		t.Errorf("the embed's notice: %+v", p.notice)
	}
	out := app.HTMLString(p.Render())
	if !strings.Contains(out, "notice-text") {
		t.Errorf("the embed view does not show the notice")
	}
	// A sound embed link pasted into the frame replaces the notice.
	b.frag = embedLinkOf(t, srcA, false, false)
	p.notice = Notice{}
	p.OpenLink(h.ctx)
	e.ConsumeAll()
	if p.notice.Text != "" {
		t.Errorf("a sound link gave the notice %q", p.notice.Text)
	}
	// An over-limit one pasted in says so too.
	b.frag = f
	p.OpenLink(h.ctx)
	e.ConsumeAll()
	if !strings.Contains(p.notice.Text, "1 to 1501") {
		t.Errorf("an over-limit link pasted into the frame: notice %q", p.notice.Text)
	}
}

// mountUntilStopped mounts a page whose analyses run until they are
// stopped: started and stopped receive as each begins and ends.
func mountUntilStopped(t *testing.T) (h *harness, e app.TestEngine, started, stopped chan struct{}) {
	started = make(chan struct{}, 4)
	stopped = make(chan struct{}, 4)
	h, e = mount(t, func(ctx context.Context, m *model.Model, o engine.Options, pr engine.ProgressFunc) (*engine.Result, error) {
		started <- struct{}{}
		<-ctx.Done()
		stopped <- struct{}{}
		return nil, ctx.Err()
	})
	return h, e, started, stopped
}

// stopAfterEarly checks text on a page whose analyses run until stopped,
// shows the early result asEarly makes of the model's whole result (as
// showEarly takes it), and stops the analysis. It returns the page, the
// whole result and the early one.
func stopAfterEarly(t *testing.T, text string, asEarly func(whole *engine.Result) *engine.Result) (*Page, *engine.Result, *engine.Result) {
	t.Helper()
	h, e, started, stopped := mountUntilStopped(t)
	p := h.page
	p.text = text
	p.check(h.ctx)
	<-started
	res, err := engine.Analyse(context.Background(), p.s.Model, engine.Options{Plots: true}, nil)
	if err != nil {
		t.Fatal(err)
	}
	early := asEarly(res)
	run := Run{Gen: p.s.Gen, Model: p.s.Model}
	if !p.s.Early(run, early) {
		t.Fatal("the early result was refused")
	}
	p.figs = numbered(BuildFigures(early, p.view))
	p.sections = Table(early, p.s.Model)
	p.progress = true
	p.StopAnalysis(h.ctx)
	<-stopped
	e.ConsumeAll()
	return p, res, early
}

// A stop after the analysis showed its early result (all but the pair
// plots): the notice says the results shown are this analysis's but for
// its pairs, and the pair cells say they were not computed.
func TestStopAfterTheEarlyResult(t *testing.T) {
	// The worker's early result: all but the pairs.
	p, _, _ := stopAfterEarly(t, "param a\nparam b\nparam c\n-(a^2 + b^2 + c^2)/2\n", func(res *engine.Result) *engine.Result {
		early := *res
		early.Plots = &engine.Plots{Marginals: res.Plots.Marginals, PairsToCome: true}
		return &early
	})
	if !strings.Contains(p.notice.Text, "but for the pair plots") {
		t.Errorf("the notice says %q", p.notice.Text)
	}
	out := app.HTMLString(&Outputs{Host: p, Out: p.resultView()})
	if !strings.Contains(out, "was not computed") {
		t.Errorf("the pair cells after Stop: %s", out)
	}
}

// A stop after the analysis showed its exact result before the fits
// (engine.Result.FitsToCome): the notice says the fits had not been made,
// and the table and the legend say the fits were still to come, not that
// they failed.
func TestStopAfterTheExactResult(t *testing.T) {
	// The exact result as AnalyseEarly hands it over: no fits yet.
	p, res, early := stopAfterEarly(t, "param a\nparam b\n-(a^2 + b^2)/2 - a^4/10\n", func(res *engine.Result) *engine.Result {
		early := *res
		early.Fits, early.FitsToCome = engine.Fits{}, true
		early.Plots = &engine.Plots{Marginals: slices.Clone(res.Plots.Marginals), Pairs: res.Plots.Pairs, PairsToCome: res.Plots.PairsToCome}
		for i := range early.Plots.Marginals {
			early.Plots.Marginals[i].Fits = [engine.NumMethods][]float64{}
		}
		return &early
	})
	if !strings.Contains(p.notice.Text, "it had not fitted the Gaussians yet") {
		t.Errorf("the notice says %q", p.notice.Text)
	}
	out := app.HTMLString(&Outputs{Host: p, Out: p.resultView()})
	for _, want := range []string{fitToCome, "(to come)", "curves follow once they are fitted"} {
		if !strings.Contains(out, want) {
			t.Errorf("the results after Stop do not say %q", want)
		}
	}
	if strings.Contains(out, absentFit) || strings.Contains(out, "(none)") {
		t.Errorf("the results after Stop call a fit still to come absent")
	}
	// The page's times are the whole result's: an early one has the
	// engine's so far.
	facts := app.HTMLString(&ModesGrid{Shown: &Shown{Result: early}})
	if strings.Contains(facts, "page time") || !strings.Contains(facts, "so far") {
		t.Errorf("the early result's times: page time shown %v, engine time so far %v", strings.Contains(facts, "page time"), strings.Contains(facts, "so far"))
	}
	whole := app.HTMLString(&ModesGrid{Shown: &Shown{Result: res}})
	if !strings.Contains(whole, "page time") || strings.Contains(whole, "so far") {
		t.Errorf("the whole result's times: page time shown %v, engine time so far %v", strings.Contains(whole, "page time"), strings.Contains(whole, "so far"))
	}
}

// A result whose reference does not resolve the density (log Z left out,
// with the unresolved diagnostic: checkMass or checkELBO fired) still
// carries the grid's exact curves; the legend says they are not the
// posterior, and says nothing of the kind for a resolved result.
func TestLegendSaysExactUnresolved(t *testing.T) {
	res := gaussResult([]string{"a", "b"}, []float64{0, 1}, [][]float64{{1, 0.5}, {0.5, 2}}, 0.1)
	pp := &PlotPanel{}
	resolved := app.HTMLString(pp.legend(&FigureSet{Dim: 2, Result: res}))
	if strings.Contains(resolved, "not resolved") || strings.Contains(resolved, "do not show the posterior") {
		t.Errorf("a resolved result's legend: %s", resolved)
	}
	unresolved := *res
	unresolved.Exact.LogZ = math.NaN()
	unresolved.Diagnostics = append(slices.Clone(res.Diagnostics), engine.Diagnostic{Code: engine.CodeUnresolved, Severity: engine.SeverityError, Message: "The grid has missed part of the mass."})
	out := app.HTMLString(pp.legend(&FigureSet{Dim: 2, Result: &unresolved}))
	for _, want := range []string{"exact (not resolved)", exactNotResolved, "do not show the posterior"} {
		if !strings.Contains(out, want) {
			t.Errorf("the legend of an unresolved result does not say %q: %s", want, out)
		}
	}
}
