package ui

import (
	"context"
	"strings"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/engine"
	"bellcheck/engine/model"
)

// harness mounts a page in go-app's test engine and keeps a live context
// (go-app pre-renders natively, so OnPreRender receives one).
type harness struct {
	app.Compo
	page *Page
	ctx  app.Context
}

func (h *harness) OnPreRender(ctx app.Context) { h.ctx = ctx }
func (h *harness) Render() app.UI              { return h.page }

func mount(t *testing.T, analyse AnalyseFunc) (*harness, app.TestEngine) {
	t.Helper()
	p := NewPage()
	p.analyse = analyse
	h := &harness{page: p}
	e := app.NewTestEngine()
	if err := e.Load(h); err != nil {
		t.Fatal(err)
	}
	e.ConsumeAll()
	return h, e
}

// resultFor returns a constructed result naming the model's parameters.
func resultFor(m *model.Model) *engine.Result {
	names := make([]string, len(m.Params))
	mean := make([]float64, len(m.Params))
	cov := make([][]float64, len(m.Params))
	for i, p := range m.Params {
		names[i] = p.Name
		cov[i] = make([]float64, len(m.Params))
		cov[i][i] = 1
	}
	return gaussResult(names, mean, cov, 0)
}

const (
	srcA = "param alpha\nld_normal(alpha, 0, 1)\n"
	srcB = "param beta\nld_normal(beta, 1, 2)\n"
	bad  = "param gamma\nld_normal(gamma, 0, 1\n"
)

func TestTypingIsCheckedOnceAfterAPause(t *testing.T) {
	var calls atomic.Int32
	h, e := mount(t, func(ctx context.Context, m *model.Model, o engine.Options, pr engine.ProgressFunc) (*engine.Result, error) {
		calls.Add(1)
		for range 3 {
			pr(engine.Progress{Stage: "grid", Fraction: 0.5})
		}
		return resultFor(m), nil
	})
	p := h.page
	// Three keystrokes within the check delay: one check, one analysis.
	p.Input(h.ctx, "param beta\n")
	p.Input(h.ctx, "param beta\nld_normal(beta, 1")
	p.Input(h.ctx, srcB)
	if !p.pending {
		t.Error("no check pending after typing")
	}
	e.ConsumeAll() // waits for the delayed check, then for the analysis
	e.ConsumeAll()
	if n := calls.Load(); n != 1 {
		t.Errorf("%d analyses for one burst of typing, want 1", n)
	}
	if p.s.Result == nil || p.s.Result.Params[0] != "beta" || p.s.Stale() {
		t.Fatalf("result not shown for the new text: %+v", p.s.Result)
	}
	html := app.HTMLString(p.Render())
	if !strings.Contains(html, "beta") || strings.Contains(html, "class=\"results stale\"") {
		t.Error("page does not show the fresh result")
	}
}

func TestErrorsKeepLastResultsDimmed(t *testing.T) {
	h, e := mount(t, func(ctx context.Context, m *model.Model, o engine.Options, pr engine.ProgressFunc) (*engine.Result, error) {
		return resultFor(m), nil
	})
	p := h.page
	p.text = srcA
	p.check(h.ctx)
	e.ConsumeAll()
	if p.s.Result == nil {
		t.Fatal("no result")
	}
	good := p.s.Result
	p.Input(h.ctx, bad)
	e.ConsumeAll()
	if p.s.Errors == nil {
		t.Fatal("the unclosed call was not reported")
	}
	if p.s.Result != good || !p.s.Stale() {
		t.Error("the last good result should stay, marked stale")
	}
	html := app.HTMLString(p.Render())
	for _, want := range []string{"results stale", "ln ln-err", "err-mark", "line 2, column"} {
		if !strings.Contains(html, want) {
			t.Errorf("page with an error lacks %q", want)
		}
	}
}

func TestOutdatedResultNeverReplacesNewer(t *testing.T) {
	release := make(chan struct{})
	h, e := mount(t, func(ctx context.Context, m *model.Model, o engine.Options, pr engine.ProgressFunc) (*engine.Result, error) {
		if m.Params[0].Name == "alpha" {
			<-release // a slow analysis that ignores cancellation
		}
		return resultFor(m), nil
	})
	p := h.page
	p.text = srcA
	p.check(h.ctx) // slow, for alpha
	p.text = srcB
	p.check(h.ctx) // fast, for beta
	time.AfterFunc(50*time.Millisecond, func() { close(release) })
	e.ConsumeAll()
	if p.s.Result == nil || p.s.Result.Params[0] != "beta" {
		t.Fatalf("shown result is for %v, want beta", p.s.Result.Params)
	}
	if p.s.Running {
		t.Error("still marked running")
	}
}

func TestEditingCancelsTheRunningAnalysis(t *testing.T) {
	var mu sync.Mutex
	var cancelled []string
	h, e := mount(t, func(ctx context.Context, m *model.Model, o engine.Options, pr engine.ProgressFunc) (*engine.Result, error) {
		if m.Params[0].Name == "alpha" {
			<-ctx.Done()
			mu.Lock()
			cancelled = append(cancelled, "alpha")
			mu.Unlock()
			return nil, ctx.Err()
		}
		return resultFor(m), nil
	})
	p := h.page
	p.text = srcA
	p.check(h.ctx)
	p.text = bad // an invalid text stops the run
	p.check(h.ctx)
	e.ConsumeAll()
	mu.Lock()
	defer mu.Unlock()
	if len(cancelled) != 1 {
		t.Fatalf("the running analysis was not cancelled")
	}
	if p.s.RunErr != nil || p.s.Running {
		t.Errorf("a cancelled run should leave no error and not run: %v, %v", p.s.RunErr, p.s.Running)
	}
}

func TestParamOptionsRestartAndSurviveEdits(t *testing.T) {
	var last engine.Options
	var mu sync.Mutex
	h, e := mount(t, func(ctx context.Context, m *model.Model, o engine.Options, pr engine.ProgressFunc) (*engine.Result, error) {
		mu.Lock()
		last = o
		mu.Unlock()
		return resultFor(m), nil
	})
	p := h.page
	p.text = "param s in [0, inf]\nld_gamma(s, 2, 1)\n"
	p.check(h.ctx)
	e.ConsumeAll()
	p.SetParam(h.ctx, "s", engine.ParamOptions{Scale: engine.Log, Points: 5000})
	e.ConsumeAll()
	mu.Lock()
	if len(last.Params) != 1 || last.Params[0].Scale != engine.Log || last.Params[0].Points != MaxPoints {
		t.Errorf("options sent: %+v", last.Params)
	}
	mu.Unlock()
	// An edit that keeps the parameter keeps its options; logit is not
	// allowed on [0, inf) and falls back to identity.
	p.SetParam(h.ctx, "s", engine.ParamOptions{Scale: engine.Logit})
	e.ConsumeAll()
	mu.Lock()
	if last.Params[0].Scale != "" {
		t.Errorf("logit on a half-line was sent: %+v", last.Params[0])
	}
	mu.Unlock()
}

func TestDefaultPageRenders(t *testing.T) {
	h, _ := mount(t, nil)
	html := app.HTMLString(h.page.Render())
	for _, want := range []string{"bellcheck", "Dose-response", "Banana", "Caution.", "full inference method", `id="bc-model"`,
		"ld_binomial", `aria-label="Model: log-density of the parameters"`} {
		if !strings.Contains(html, want) {
			t.Errorf("default page lacks %q", want)
		}
	}
}

func TestExampleBringsItsSuggestedScale(t *testing.T) {
	var mu sync.Mutex
	var last engine.Options
	h, e := mount(t, func(ctx context.Context, m *model.Model, o engine.Options, pr engine.ProgressFunc) (*engine.Result, error) {
		mu.Lock()
		last = o
		mu.Unlock()
		return resultFor(m), nil
	})
	h.page.LoadExample(h.ctx, "decay")
	e.ConsumeAll()
	mu.Lock()
	defer mu.Unlock()
	if len(last.Params) != 1 || last.Params[0].Scale != engine.Log {
		t.Errorf("decay example analysed with %+v, want the log scale", last.Params)
	}
	if h.page.example != "decay" || h.page.text != h.page.s.Source {
		t.Error("example not loaded into the editor state")
	}
}

func TestTypingStopsTheRunningAnalysisAtOnce(t *testing.T) {
	started := make(chan struct{}, 4)
	h, e := mount(t, func(ctx context.Context, m *model.Model, o engine.Options, pr engine.ProgressFunc) (*engine.Result, error) {
		if m.Params[0].Name == "alpha" {
			started <- struct{}{}
			<-ctx.Done()
			return nil, ctx.Err()
		}
		return resultFor(m), nil
	})
	p := h.page
	p.text = srcA
	p.check(h.ctx)
	<-started
	p.Input(h.ctx, srcB) // no waiting for the check: the old run stops now
	if p.cancel != nil || p.s.Running {
		t.Error("the running analysis goes on while the user types")
	}
	e.ConsumeAll()
	if p.s.Result == nil || p.s.Result.Params[0] != "beta" {
		t.Errorf("after the pause the new text is analysed: %+v", p.s.Result)
	}
	src, params, _ := p.State()
	if src != srcB || len(params) != 0 {
		t.Errorf("state %q %v", src, params)
	}
}
