package ui

import (
	"context"
	"errors"
	"strings"
	"testing"
	"time"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/engine"
)

// An early result (all but the pairs) shows as current while its analysis
// runs, is refused for an outdated run, turns stale when a newer analysis
// begins or the user stops, and the whole result clears Partial.
func TestSessionEarlyResult(t *testing.T) {
	var s Session
	if !s.Edit("param a\n-a^2/2\n") {
		t.Fatal(s.Errors)
	}
	run, _ := s.Begin(time.Now())
	first, whole := &engine.Result{}, &engine.Result{}
	if !s.Early(run, first) || s.Result != first || !s.Partial || s.Stale() || !s.Running {
		t.Fatalf("early result: shown %v, partial %v, stale %v, running %v", s.Result == first, s.Partial, s.Stale(), s.Running)
	}
	if !s.Finish(run, whole, nil, 0, 0) || s.Result != whole || s.Partial || s.Stale() {
		t.Fatalf("whole result: shown %v, partial %v, stale %v", s.Result == whole, s.Partial, s.Stale())
	}

	old, _ := s.Begin(time.Now())
	newer, _ := s.Begin(time.Now())
	if s.Early(old, first) || s.Result != whole {
		t.Fatal("an outdated run's early result was taken")
	}
	if !s.Early(newer, first) || s.Stale() {
		t.Fatal("the newest run's early result is not current")
	}
	s.Cancel() // the user stopped: the early result stays, dimmed
	if s.Result != first || !s.Partial || !s.Stale() {
		t.Fatalf("after a stop: shown %v, partial %v, stale %v", s.Result == first, s.Partial, s.Stale())
	}
	if s.Early(newer, whole) {
		t.Fatal("an early result taken after the stop")
	}
	third, _ := s.Begin(time.Now())
	s.Early(third, first)
	if !s.Finish(third, nil, errors.New("the pairs failed"), 0, 0) || s.RunErr == nil || s.Result != first {
		t.Fatal("a failure after the early result")
	}
}

// The pair cells of an early result say the pairs are being computed while
// its analysis runs, and that they were not once it failed after it.
func TestPairCellsAfterAFailure(t *testing.T) {
	h, _ := mount(t, nil)
	p := h.page
	p.text = "param a\nparam b\nparam c\n-(a^2 + b^2 + c^2)/2\n"
	if !p.s.Edit(p.text) {
		t.Fatal(p.s.Errors)
	}
	res, err := engine.Analyse(context.Background(), p.s.Model, engine.Options{Plots: true}, nil)
	if err != nil {
		t.Fatal(err)
	}
	early := *res
	early.Plots = &engine.Plots{Marginals: res.Plots.Marginals, PairsToCome: true}
	run, _ := p.s.Begin(time.Now())
	p.s.Early(run, &early)
	p.figs = numbered(BuildFigures(&early, p.view))
	if out := app.HTMLString(&Outputs{Host: p, Out: p.resultView()}); !strings.Contains(out, "Computing the pair marginal") {
		t.Errorf("while the analysis runs: %s", out)
	}
	p.s.Finish(run, nil, errors.New("the pairs failed"), 0, 0)
	out := app.HTMLString(&Outputs{Host: p, Out: p.resultView()})
	if strings.Contains(out, "Computing the pair marginal") || !strings.Contains(out, "was not computed") {
		t.Errorf("after the failure: %s", out)
	}
}
