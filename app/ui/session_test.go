package ui

import (
	"errors"
	"testing"
	"time"

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
