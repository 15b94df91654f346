package ui

import (
	"errors"
	"math"
	"slices"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/examples"
	"bellcheck/app/wire"
	"bellcheck/engine"
)

// fakeWorker connects the page's worker client to an analysis server in
// the same program (natively there is no Web Worker): messages go through
// the same encoding, and the test can look at or alter the requests.
type fakeWorker struct {
	mu       sync.Mutex
	requests []workRequest
	srv      *analysisServer
	// alter, when set, changes a request before the server reads it;
	// drop, when set, loses it and fails the worker instead.
	alter func(*workRequest)
	drop  bool
}

func connectWorker(t *testing.T, p *Page) *fakeWorker {
	t.Helper()
	fw := &fakeWorker{}
	fw.srv = &analysisServer{post: func(b []byte) error { p.worker.received(b); return nil }}
	p.worker.mu.Lock()
	p.worker.state, p.worker.send = workerReady, fw.send(t, p)
	p.worker.mu.Unlock()
	return fw
}

func (fw *fakeWorker) send(t *testing.T, p *Page) func([]byte) error {
	return func(b []byte) error {
		var req workRequest
		gen, err := unframeInto(b, &req)
		if err != nil {
			t.Errorf("the worker cannot read the page's request: %v", err)
			return err
		}
		fw.mu.Lock()
		fw.requests = append(fw.requests, req)
		alter, drop := fw.alter, fw.drop
		fw.mu.Unlock()
		if drop {
			go p.worker.failed("the worker crashed")
			return nil
		}
		if alter != nil {
			alter(&req)
			var err error
			if b, err = frame(gen, req); err != nil {
				t.Fatal(err)
			}
		}
		fw.srv.receive(b)
		return nil
	}
}

func (fw *fakeWorker) analyses() int {
	fw.mu.Lock()
	defer fw.mu.Unlock()
	n := 0
	for _, r := range fw.requests {
		if !r.Stop {
			n++
		}
	}
	return n
}

// TestWorkerServesThePage runs the page's analyses through the worker's
// server: the result equals the page's own analysis of the same model, a
// forecast within PageLocalWork then keeps the same work on the page, and
// the worker's refusal beyond PageMaxTime gives the page's TooLongError and
// notice.
func TestWorkerServesThePage(t *testing.T) {
	old := PageMaxTime
	defer func() { PageMaxTime = old }()
	h, e := mount(t, nil)
	p := h.page
	p.browser = newMemBrowser("")
	waitIdle(t, p, e)
	fw := connectWorker(t, p)

	src := "param a\nparam b\nld_normal(1, a + b, 1) - a^2/2 - b^2/2\n"
	p.Input(h.ctx, src)
	e.ConsumeAll()
	waitIdle(t, p, e)
	if p.s.RunErr != nil || p.s.Result == nil {
		t.Fatalf("no result through the worker: %v", p.s.RunErr)
	}
	if fw.analyses() != 1 {
		t.Fatalf("%d requests reached the worker, want 1", fw.analyses())
	}
	// The same analysis on the page: the same numbers (the engine is
	// deterministic; only the timings differ).
	sameAsPagesOwn(t, p, p.s.Result)
	if p.figs == nil {
		t.Error("no figures from the worker's reply")
	}

	// The same work again (a comment): the worker's forecast decides where.
	work := workIdentity(p.s.Model, p.data.digest, p.s.Options())
	small := p.smallWork(work)
	p.Input(h.ctx, src+"# again\n")
	e.ConsumeAll()
	waitIdle(t, p, e)
	want := 2
	if small {
		want = 1 // forecast within PageLocalWork: analysed on the page
	}
	if fw.analyses() != want {
		t.Errorf("%d requests reached the worker, want %d (forecast within PageLocalWork: %v)", fw.analyses(), want, small)
	}

	// Beyond the bound: the worker refuses, the page says so.
	PageMaxTime = time.Nanosecond
	p.Input(h.ctx, "param a\nparam b\nparam c\nld_normal(1, a + b + c, 1) - a^2/2 - b^2/2 - c^2/2\n")
	e.ConsumeAll()
	waitIdle(t, p, e)
	var tl *TooLongError
	if !errors.As(p.s.RunErr, &tl) || !strings.Contains(p.notice.Text, "was not started") {
		t.Fatalf("run error %v, notice %q: want the worker's refusal", p.s.RunErr, p.notice.Text)
	}
}

// TestWorkerFallsBackToThePage: a request the worker cannot rebuild (its
// model's canonical form differs) and a worker that dies while the page
// waits both leave the analysis to the page, which shows its result.
func TestWorkerFallsBackToThePage(t *testing.T) {
	h, e := mount(t, nil)
	p := h.page
	p.browser = newMemBrowser("")
	waitIdle(t, p, e)
	fw := connectWorker(t, p)
	fw.alter = func(r *workRequest) { r.Canonical += "# not the page's\n" }
	src := "param a\nld_normal(a, 1, 2)\n"
	p.Input(h.ctx, src)
	e.ConsumeAll()
	waitIdle(t, p, e)
	if p.s.RunErr != nil || p.s.Result == nil || fw.analyses() != 1 {
		t.Fatalf("after a refusal: error %v, result %v, %d requests", p.s.RunErr, p.s.Result != nil, fw.analyses())
	}
	if !p.worker.isReady() {
		t.Error("a refused request stopped the worker")
	}

	fw.mu.Lock()
	fw.alter, fw.drop = nil, true
	fw.mu.Unlock()
	// Other work each time: a forecast within PageLocalWork would keep the
	// same work on the page.
	p.Input(h.ctx, "param a\nld_normal(a, 2, 3)\n")
	e.ConsumeAll()
	waitIdle(t, p, e)
	if p.s.RunErr != nil || p.s.Result == nil || p.s.ResultGen != p.s.Gen {
		t.Fatalf("after the worker died: error %v, result gen %d of %d", p.s.RunErr, p.s.ResultGen, p.s.Gen)
	}
	if p.worker.isReady() {
		t.Error("the dead worker is still taken for ready")
	}
	n := fw.analyses()
	p.Input(h.ctx, "param a\nld_normal(a, 3, 4)\n")
	e.ConsumeAll()
	waitIdle(t, p, e)
	if fw.analyses() != n || p.s.Result == nil {
		t.Errorf("an analysis went to the dead worker (%d requests, %d before)", fw.analyses(), n)
	}
}

// TestWorkerStops: in the worker's server, a stop for the running
// generation cancels it (no result is sent), a newer request cancels the
// running one and is answered, and a stop for an older generation leaves
// the newer one running.
func TestWorkerStops(t *testing.T) {
	var mu sync.Mutex
	got := map[uint64][]replyKind{}
	srv := &analysisServer{post: func(b []byte) error {
		var r workReply
		gen, err := unframeInto(b, &r)
		if err != nil {
			t.Error(err)
		}
		mu.Lock()
		got[gen] = append(got[gen], r.Kind)
		mu.Unlock()
		return nil
	}}
	kinds := func(gen uint64) []replyKind {
		mu.Lock()
		defer mu.Unlock()
		return append([]replyKind(nil), got[gen]...)
	}
	request := func(gen uint64, src string) {
		var s Session
		if !s.Edit(src) {
			t.Fatal(s.Errors)
		}
		run, _ := s.Begin(nowForTest())
		p := &Page{s: s}
		b, err := frame(gen, p.newRemoteRun(run, "").req)
		if err != nil {
			t.Fatal(err)
		}
		srv.receive(b)
	}
	stop := func(gen uint64) {
		b, _ := frame(gen, workRequest{Stop: true})
		srv.receive(b)
	}
	waitFor := func(what string, ok func() bool) {
		t.Helper()
		for deadline := time.Now().Add(30 * time.Second); !ok(); time.Sleep(5 * time.Millisecond) {
			if time.Now().After(deadline) {
				t.Fatalf("waiting for %s: replies %v", what, got)
			}
		}
	}
	has := func(gen uint64, k replyKind) bool { return slices.Contains(kinds(gen), k) }
	ex, _ := examples.ByID("clock")
	small := "param a\nld_normal(a, 1, 2)\n"

	request(1, ex.Source)
	waitFor("progress of 1", func() bool { return has(1, replyProgress) })
	stop(1)
	request(2, ex.Source)
	waitFor("progress of 2", func() bool { return has(2, replyProgress) })
	request(3, small)
	waitFor("the result of 3", func() bool { return has(3, replyResult) })
	request(4, ex.Source)
	waitFor("progress of 4", func() bool { return has(4, replyProgress) })
	stop(3) // outdated: 4 goes on
	waitFor("the result of 4", func() bool { return has(4, replyResult) })
	time.Sleep(100 * time.Millisecond)
	for _, gen := range []uint64{1, 2} {
		if has(gen, replyResult) {
			t.Errorf("analysis %d was cancelled, yet its result was sent", gen)
		}
	}
}

// TestWorkerShowsTheResultBeforeItsPairs runs a 3-D analysis with plots
// through the worker: the worker sends the early result (no pairs,
// PairsToCome) before the whole one, and the page ends on the whole result
// with its pair panels drawn, equal to the page's own analysis.
func TestWorkerShowsTheResultBeforeItsPairs(t *testing.T) {
	h, e := mount(t, nil)
	p := h.page
	p.browser = newMemBrowser("")
	waitIdle(t, p, e)
	fw := connectWorker(t, p)
	var mu sync.Mutex
	var kinds []replyKind
	var early *engine.Result
	fw.srv.post = func(b []byte) error {
		var r workReply
		if _, err := unframeInto(b, &r); err == nil {
			mu.Lock()
			kinds = append(kinds, r.Kind)
			if r.Kind == replyEarly {
				early = r.Result
			}
			mu.Unlock()
		}
		p.worker.received(b)
		return nil
	}

	src := "param a\nparam b\nparam c\n-(a^2 + b^2 + c^2)/2 - (a - b)^2 - (b + c - 1)^2/2\n"
	p.Input(h.ctx, src)
	e.ConsumeAll()
	waitIdle(t, p, e)
	if p.s.RunErr != nil || p.s.Result == nil {
		t.Fatalf("no result through the worker: %v", p.s.RunErr)
	}
	mu.Lock()
	defer mu.Unlock()
	ie, ir := slices.Index(kinds, replyEarly), slices.Index(kinds, replyResult)
	if ie < 0 || ir < 0 || ie > ir {
		t.Fatalf("replies %v: want an early result before the result", kinds)
	}
	if early.Plots == nil || !early.Plots.PairsToCome || len(early.Plots.Pairs) != 0 || len(early.Plots.Marginals) != 3 {
		t.Fatalf("early result's plots: %+v", early.Plots)
	}
	res := p.s.Result
	if p.s.Partial || res.Plots == nil || res.Plots.PairsToCome || len(res.Plots.Pairs) != 3 {
		t.Fatalf("the page ends on partial %v, plots %+v", p.s.Partial, res.Plots)
	}
	if p.figs == nil || p.figs.Grid == nil || p.figs.Grid[1][0] == nil || p.figs.Grid[1][0].P == nil {
		t.Error("the whole result's pair panel (b against a) is not drawn")
	}
	sameAsPagesOwn(t, p, res)
}

// sameAsPagesOwn checks that res, the worker's result, equals the page's
// own analysis of the same model and options bit for bit (the engine is
// deterministic; only the timings differ).
func sameAsPagesOwn(t *testing.T, p *Page, res *engine.Result) {
	t.Helper()
	local, err := engine.Analyse(t.Context(), p.s.ResultModel, p.s.Options(), nil)
	if err != nil {
		t.Fatal(err)
	}
	got := *res
	got.Timing, local.Timing = engine.Timing{}, engine.Timing{}
	if d := wire.Diff(&got, local); d != "" {
		t.Errorf("the worker's result differs from the page's at Result%s", d)
	}
}

// TestFitUnconstrainedOffer: a model whose scale parameter is fitted as it
// is (its own line names the identity scale; log is s's default) gets the
// infinite_kl diagnostic with a button that fits it on the log scale;
// pressing it sets the option, which overrides the line, and the next
// result has the reverse-KL fits (KL(q||p) finite: the support is the
// whole line there).
func TestFitUnconstrainedOffer(t *testing.T) {
	h, e := typedOnPage(t, "#@ scale s=identity\n"+fourReadings)
	p := h.page
	res := p.s.Result
	if res == nil || res.Fits[engine.ReverseKL] != nil {
		t.Fatalf("as it is, want no reverse-KL fit: %v", res)
	}
	out := app.HTMLString(&Outputs{Host: p, Out: p.resultView()})
	if !strings.Contains(out, FitUnconstrainedID) || !strings.Contains(out, "Fit s on the log scale") {
		t.Fatalf("no offer beside infinite_kl: %s", out)
	}
	p.FitUnconstrained(h.ctx, []string{"s"})
	e.ConsumeAll()
	waitIdle(t, p, e)
	if sc := p.s.Param("s").Scale; sc != engine.Log {
		t.Errorf("s is fitted on the %q scale, want log", sc)
	}
	res = p.s.Result
	if res == nil || res.Fits[engine.ReverseKL] == nil || math.IsInf(res.Fits[engine.ReverseKL].KLqp, 1) {
		t.Errorf("after the offer: reverse-KL fit %v", res.Fits[engine.ReverseKL])
	}
	if out := app.HTMLString(&Outputs{Host: p, Out: p.resultView()}); strings.Contains(out, FitUnconstrainedID) {
		t.Errorf("the offer stays after it was taken")
	}
}

// TestNoScaleOfferWithACandidate: a candidate Gaussian on the original
// scale keeps a bounded parameter as it is (its default there), so the
// infinite_kl diagnostic stands, but the button is not offered: on the log
// scale the candidate would be refused.
func TestNoScaleOfferWithACandidate(t *testing.T) {
	h, _ := typedOnPage(t, "#@ gaussian mine mean.m=1.2 mean.s=0.4 sd.m=0.2 sd.s=0.15\n"+fourReadings)
	p := h.page
	res := p.s.Result
	if res == nil || len(res.Scales) != 2 || res.Scales[1] != engine.Identity || len(res.Candidates) != 1 {
		t.Fatalf("want s as it is and the candidate scored: %+v", res)
	}
	if out := app.HTMLString(&Outputs{Host: p, Out: p.resultView()}); !strings.Contains(out, "infinite_kl") || strings.Contains(out, FitUnconstrainedID) {
		t.Errorf("want the infinite_kl diagnostic without the offer")
	}
}

// fourReadings is a normal mean and sd from four readings under a 1/s
// prior (our data): s is bounded, its default scale the log one.
const fourReadings = "y = [1.2, 0.8, 1.1, 1.6]\nparam m\nparam s in [0, inf]\n-log(s) + sum(ld_normal(y, m, s))\n"

// typedOnPage mounts a page with an in-memory browser, types src into it
// and waits for its analysis.
func typedOnPage(t *testing.T, src string) (*harness, app.TestEngine) {
	t.Helper()
	h, e := mount(t, nil)
	p := h.page
	p.browser = newMemBrowser("")
	waitIdle(t, p, e)
	p.Input(h.ctx, src)
	e.ConsumeAll()
	waitIdle(t, p, e)
	return h, e
}
