package ui

import (
	"context"
	"errors"
	"strings"
	"testing"
	"time"

	"bellcheck/engine"
	"bellcheck/engine/model"
)

// TestPageRefusesAnalysisBeyondItsBound: an analysis forecast beyond
// PageMaxTime is not started; the reason is the run's error and the notice
// offers a coarser grid, which then runs.
func TestPageRefusesAnalysisBeyondItsBound(t *testing.T) {
	old := PageMaxTime
	defer func() { PageMaxTime = old }()
	h, e := mount(t, nil) // the page's own analysis: forecast, then engine.Analyse
	p := h.page
	p.browser = newMemBrowser("")
	// 2-D default: 301 x 301 nodes; the bounds below are set from the
	// forecast itself (none is a timing assertion).
	src := "param a\nparam b\nld_normal(1, a + b, 1) - a^2/2 - b^2/2\n"
	p.Input(h.ctx, src)
	e.ConsumeAll()
	waitIdle(t, p, e)
	if p.s.RunErr != nil || p.s.Result == nil {
		t.Fatalf("unbounded run: %v", p.s.RunErr)
	}
	PageMaxTime = time.Nanosecond
	p.Input(h.ctx, src+"# again\n")
	e.ConsumeAll()
	waitIdle(t, p, e)
	var tl *TooLongError
	if !errors.As(p.s.RunErr, &tl) || !strings.Contains(p.s.RunErr.Error(), "more than the 1ns the page allows") {
		t.Fatalf("run error %v, want a TooLongError", p.s.RunErr)
	}
	if !p.notice.Warn || !strings.Contains(p.notice.Text, "was not started") {
		t.Errorf("notice %+v", p.notice)
	}
	if tl.Points != 0 || p.notice.Offer != nil {
		t.Errorf("nothing fits in 1 ns, yet %d points are offered", tl.Points)
	}
	// A bound the coarsest grid meets: the offer sets the points, and taking
	// it runs. The forecast's parts that do not shrink with the grid (a few
	// milliseconds, and the evaluations with derivatives) are a small part
	// of the default grid's (its 301 x 301 nodes cost 0.24 ms per thousand
	// besides the density), so the offer's half of 0.9 times the total
	// holds a coarser grid.
	PageMaxTime = tl.Estimate.Total * 9 / 10
	p.Input(h.ctx, src)
	e.ConsumeAll()
	waitIdle(t, p, e)
	if !errors.As(p.s.RunErr, &tl) || tl.Points == 0 || p.notice.Offer == nil {
		t.Fatalf("run error %v, notice %+v: want a coarser grid offered", p.s.RunErr, p.notice)
	}
	if got := p.notice.Offer.Params[0].Points; got != tl.Points {
		t.Errorf("offer of %d points, want %d", got, tl.Points)
	}
	p.TakeOffer(h.ctx)
	e.ConsumeAll()
	waitIdle(t, p, e)
	if p.s.RunErr != nil || p.s.Result == nil || p.s.Result.Grid.Points[0] != tl.Points {
		t.Errorf("the coarser grid did not run: %v", p.s.RunErr)
	}
}

// waitIdle waits until the page's analysis has finished.
func waitIdle(t *testing.T, p *Page, e interface{ ConsumeAll() }) {
	t.Helper()
	for i := 0; i < 600; i++ {
		e.ConsumeAll()
		if !p.s.Running && !p.pending {
			return
		}
		time.Sleep(50 * time.Millisecond)
	}
	t.Fatal("the analysis did not finish in 30 s")
}

// TestForecastKeptForTheSameWork: the page keeps the last forecast and
// does not forecast the same work again (a comment typed changes nothing of
// it); other work is forecast. The kept forecast is made to exceed the
// bound, so whether it was used shows in the outcome.
func TestForecastKeptForTheSameWork(t *testing.T) {
	h, e := mount(t, nil)
	p := h.page
	p.browser = newMemBrowser("")
	src := "param a\nparam b\nld_normal(1, a + b, 1) - a^2/2 - b^2/2\n"
	p.Input(h.ctx, src)
	e.ConsumeAll()
	waitIdle(t, p, e)
	if p.s.RunErr != nil || p.s.Result == nil {
		t.Fatalf("first run: %v", p.s.RunErr)
	}
	if p.memo.work == "" {
		t.Fatal("no forecast kept")
	}
	p.memo.est.Total = 2 * PageMaxTime
	p.Input(h.ctx, src+"# a comment\n")
	e.ConsumeAll()
	waitIdle(t, p, e)
	var tl *TooLongError
	if !errors.As(p.s.RunErr, &tl) || tl.Estimate.Total != 2*PageMaxTime {
		t.Fatalf("run error %v: the kept forecast was not used", p.s.RunErr)
	}
	p.Input(h.ctx, src+"c = 2\n")
	e.ConsumeAll()
	waitIdle(t, p, e)
	if p.s.RunErr != nil || p.s.Result == nil {
		t.Fatalf("other work was not forecast afresh: %v", p.s.RunErr)
	}
}

// TestWorkIdentity: comments and a slider's value leave the work as it
// is; a statement, the table or an option changes it.
func TestWorkIdentity(t *testing.T) {
	parse := func(src string) *model.Model {
		m, err := model.Parse(src)
		if err != nil {
			t.Fatal(err)
		}
		return m
	}
	src := "param a\nb = 0.5 # a constant\nld_normal(a, b, 1)\n"
	base := workIdentity(parse(src), "", engine.Options{Plots: true})
	if base == "" {
		t.Fatal("no identity")
	}
	if w := workIdentity(parse("# first\n"+src+"# last\n"), "", engine.Options{Plots: true}); w != base {
		t.Error("a comment changed the work")
	}
	for name, w := range map[string]string{
		"a statement": workIdentity(parse(src+"c = 1\n"), "", engine.Options{Plots: true}),
		"the table":   workIdentity(parse(src), "abc", engine.Options{Plots: true}),
		"an option":   workIdentity(parse(src), "", engine.Options{Plots: true, Params: []engine.ParamOptions{{Points: 50}}}),
	} {
		if w == base {
			t.Errorf("%s left the work as it was", name)
		}
	}
	if workIdentity(nil, "", engine.Options{}) != "" {
		t.Error("no model has an identity")
	}
}

// TestRemeasured: a forecast within the limit is taken at once; one over
// it is measured again up to twice and the smallest stands, so a first
// measurement in a slow tier does not refuse the work alone; a failed
// second measurement keeps the first.
func TestRemeasured(t *testing.T) {
	ctx := context.Background()
	seq := func(totals ...time.Duration) (func() (engine.Estimate, error), *int) {
		calls := new(int)
		return func() (engine.Estimate, error) {
			i := min(*calls, len(totals)-1)
			*calls++
			if totals[i] < 0 {
				return engine.Estimate{}, errors.New("no measurement")
			}
			return engine.Estimate{Total: totals[i]}, nil
		}, calls
	}
	for _, c := range []struct {
		name   string
		totals []time.Duration
		want   time.Duration
		calls  int
	}{
		{"within", []time.Duration{5 * time.Second}, 5 * time.Second, 1},
		{"faster the second time", []time.Duration{56 * time.Second, 6 * time.Second}, 6 * time.Second, 2},
		{"over every time", []time.Duration{56 * time.Second, 88 * time.Second, 40 * time.Second}, 40 * time.Second, 3},
		{"second fails", []time.Duration{56 * time.Second, -1}, 56 * time.Second, 2},
	} {
		measure, calls := seq(c.totals...)
		est, err := remeasured(ctx, 30*time.Second, measure)
		if err != nil || est.Total != c.want || *calls != c.calls {
			t.Errorf("%s: %v after %d measurements (err %v), want %v after %d", c.name, est.Total, *calls, err, c.want, c.calls)
		}
	}
}
