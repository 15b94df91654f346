//go:build (browser || benchharness) && !(js && wasm)

package main

// Helpers shared by the browser tests (tag browser) and the benchmark
// harness (tag benchharness): the static site in a temporary folder, a file
// server on 127.0.0.1, one headless chromium, tabs with a probe script that
// records the page's status changes, long tasks and console errors.

import (
	"context"
	"encoding/json"
	"fmt"
	"net"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/chromedp/cdproto/page"
	"github.com/chromedp/chromedp"

	"bellcheck/app/examples"
)

// chromiumEnv names the variable that points at the chromium binary; the
// browser tests skip without it (make test-browser sets it).
const chromiumEnv = "BELLCHECK_CHROMIUM"

// chromiumPath returns the chromium binary, skipping the test when none is
// configured.
func chromiumPath(tb testing.TB) string {
	tb.Helper()
	p := os.Getenv(chromiumEnv)
	if p == "" {
		tb.Skipf("%s is not set: the browser tests need chromium (run `make test-browser`, which installs Debian's chromium and sets it)", chromiumEnv)
	}
	if _, err := os.Stat(p); err != nil {
		tb.Fatalf("%s=%s: %v", chromiumEnv, p, err)
	}
	return p
}

// buildSite writes the static site (as `bellcheck static` does) from ../web
// into a temporary folder and returns the folder.
func buildSite(tb testing.TB) string {
	tb.Helper()
	wasm := filepath.Join("..", "web", "app.wasm")
	st, err := os.Stat(wasm)
	if err != nil {
		tb.Fatalf("%s is missing: build it with `make wasm` (make test-browser does)", wasm)
	}
	if age := time.Since(st.ModTime()); age > 24*time.Hour {
		tb.Logf("note: %s is %s old; `make wasm` rebuilds it", wasm, age.Round(time.Minute))
	}
	dir := tb.TempDir()
	if err := writeStatic(dir, filepath.Join("..", "web"), ""); err != nil {
		tb.Fatalf("writing the static site: %v", err)
	}
	return dir
}

// siteServer serves a folder on 127.0.0.1 with a file server, and can be
// stopped and told to refuse connections (the listener is closed).
type siteServer struct {
	*httptest.Server
	mu       sync.Mutex
	requests []string
	extra    map[string]string // path -> folder, served beside the site
}

// serveSite serves dir on 127.0.0.1:0. extra maps URL prefixes (such as
// "/bench/") to folders also served.
func serveSite(tb testing.TB, dir string, extra map[string]string) *siteServer {
	tb.Helper()
	s := &siteServer{extra: extra}
	// The site is served as a compressing static host serves it: the
	// precompressed copies writeStatic makes, to clients that accept gzip.
	files := gzipFiles(dir, http.FileServer(http.Dir(dir)))
	mux := http.NewServeMux()
	for prefix, folder := range extra {
		mux.Handle(prefix, http.StripPrefix(prefix, http.FileServer(http.Dir(folder))))
	}
	mux.Handle("/", files)
	s.Server = httptest.NewUnstartedServer(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		s.mu.Lock()
		s.requests = append(s.requests, r.URL.Path)
		s.mu.Unlock()
		mux.ServeHTTP(w, r)
	}))
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		tb.Fatal(err)
	}
	s.Listener = ln
	s.Start()
	tb.Cleanup(s.Close)
	return s
}

// Requests returns the paths requested so far.
func (s *siteServer) Requests() []string {
	s.mu.Lock()
	defer s.mu.Unlock()
	return append([]string(nil), s.requests...)
}

// browser is one headless chromium shared by the tests.
type browser struct {
	ctx context.Context
}

// startBrowser starts headless chromium with the options known to work as
// root on this machine (TOOLCHAIN.md), with a window of w by h pixels.
func startBrowser(tb testing.TB, exe string, w, h int) *browser {
	tb.Helper()
	opts := []chromedp.ExecAllocatorOption{
		chromedp.ExecPath(exe),
		chromedp.Headless,
		chromedp.NoSandbox,
		chromedp.DisableGPU,
		chromedp.NoFirstRun,
		chromedp.NoDefaultBrowserCheck,
		chromedp.Flag("disable-quic", true),
		chromedp.Flag("disable-background-networking", true),
		chromedp.Flag("disable-component-update", true),
		chromedp.Flag("disable-sync", true),
		chromedp.Flag("disable-dev-shm-usage", true),
		chromedp.Flag("disable-background-timer-throttling", true),
		chromedp.Flag("disable-renderer-backgrounding", true),
		chromedp.Flag("disable-backgrounding-occluded-windows", true),
		chromedp.UserDataDir(tb.TempDir()),
		chromedp.WindowSize(w, h),
	}
	if f := os.Getenv("BELLCHECK_JS_FLAGS"); f != "" {
		// V8's flags, for experiments on the engine's tiers
		// (DEVELOPERS.md, Benchmarks).
		opts = append(opts, chromedp.Flag("js-flags", f))
	}
	actx, cancelAlloc := chromedp.NewExecAllocator(context.Background(), opts...)
	bctx, cancelBrowser := chromedp.NewContext(actx)
	// The first action starts the browser; it must not carry a timeout,
	// or the browser would end with it.
	if err := chromedp.Do(bctx, chromedp.Navigate("about:blank")); err != nil {
		cancelBrowser()
		cancelAlloc()
		tb.Fatalf("starting chromium: %v", err)
	}
	tb.Cleanup(func() {
		cancelBrowser()
		cancelAlloc()
	})
	return &browser{ctx: bctx}
}

// probeJS runs in every document a tab loads, before the page's scripts.
// It records, in window.__bc: each new result the page shows (the results
// area #bc-output turning to data-state "ready" with a new
// data-result-gen, app/ui's hook) and the moment after the next frame is
// painted; the failed analyses (data-state "error"); the page's run status
// text (.run-status) as it changes; the long tasks the browser reports
// (PerformanceObserver "longtask"); and it offers edit(text), which
// replaces the editor's text as typing does (an input event) and notes the
// moment.
const probeJS = `(() => {
  if (window.__bc) return;
  const st = {done: 0, failed: 0, doneAt: [], drawnAt: [], shownAt: [], shownDrawnAt: [], editAt: 0, status: "", tasks: [], log: []};
  window.__bc = st;
  let last = null, lastState = null, lastGen = null, lastShown = null;
  const check = () => {
    const now = performance.now();
    const el = document.querySelector(".run-status");
    const t = el ? el.textContent.trim() : "";
    if (t !== last) {
      last = t;
      st.status = t;
      if (st.log.length < 2000) st.log.push([Math.round(now), t]);
    }
    const out = document.getElementById("bc-output");
    if (!out) return;
    const state = out.dataset.state, gen = out.dataset.resultGen;
    // A new result shown, whatever the state: with a slider's analysis
    // chained to the last (app/ui's slider rule) the state stays running.
    if (gen && gen !== "0" && gen !== lastShown) {
      lastShown = gen;
      st.shownAt.push(now);
      requestAnimationFrame(() => setTimeout(() => st.shownDrawnAt.push(performance.now()), 0));
    }
    if (state === "ready" && gen !== lastGen) {
      lastGen = gen;
      st.done++;
      st.doneAt.push(now);
      requestAnimationFrame(() => setTimeout(() => st.drawnAt.push(performance.now()), 0));
    } else if (state === "error" && lastState !== "error") {
      st.failed++;
    }
    lastState = state;
  };
  new MutationObserver(check).observe(document, {subtree: true, childList: true, characterData: true,
    attributes: true, attributeFilter: ["data-state", "data-result-gen"]});
  try {
    new PerformanceObserver((list) => {
      for (const e of list.getEntries()) st.tasks.push([e.startTime, e.duration]);
    }).observe({type: "longtask", buffered: true});
    st.longtaskObserver = true;
  } catch (e) {
    st.longtaskObserver = false;
  }
  st.edit = (text) => {
    const ta = document.getElementById("bc-model");
    if (!ta) return false;
    ta.value = text;
    st.editAt = performance.now();
    ta.dispatchEvent(new Event("input", {bubbles: true}));
    return true;
  };
  st.longestSince = (t0) => {
    let m = 0;
    for (const [s, d] of st.tasks) if (s + d >= t0) m = Math.max(m, d);
    return m;
  };
  st.summary = () => ({done: st.done, failed: st.failed, doneAt: st.doneAt, drawnAt: st.drawnAt, shownAt: st.shownAt, shownDrawnAt: st.shownDrawnAt,
    editAt: st.editAt, status: st.status, longest: st.longestSince(0), longtasks: st.tasks.length});
})();`

// tab is one browser tab with the probe script installed in every document
// it loads, and a log of its console errors.
type tab struct {
	ctx    context.Context
	cancel context.CancelFunc
	mu     sync.Mutex
	errs   []string
}

// close closes the tab (its context ends).
func (t *tab) close() { t.cancel() }

// newTab opens a tab. isolated gives it a browser context of its own (fresh
// storage, cache and service workers).
func (b *browser) newTab(tb testing.TB, isolated bool) *tab {
	tb.Helper()
	var opts []chromedp.ContextOption
	if isolated {
		opts = append(opts, chromedp.WithNewBrowserContext())
	}
	ctx, cancel := chromedp.NewContext(b.ctx, opts...)
	tb.Cleanup(cancel)
	if err := chromedp.Do(ctx); err != nil {
		tb.Fatalf("opening a tab: %v", err)
	}
	t := &tab{ctx: ctx, cancel: cancel}
	messages := chromedp.Console(ctx)
	go func() {
		for m, err := range messages {
			if err != nil {
				return
			}
			if m.Type == chromedp.ConsoleError || m.IsException() {
				t.mu.Lock()
				t.errs = append(t.errs, fmt.Sprintf("%s (%s:%d)", m.String(), m.URL, m.Line+1))
				t.mu.Unlock()
			}
		}
	}()
	if _, err := chromedp.Call(ctx, page.AddScriptToEvaluateOnNewDocument,
		page.AddScriptToEvaluateOnNewDocumentParams{Source: probeJS}); err != nil {
		tb.Fatalf("installing the probe script: %v", err)
	}
	return t
}

// consoleErrors returns the console errors and exceptions logged so far.
func (t *tab) consoleErrors() []string {
	t.mu.Lock()
	defer t.mu.Unlock()
	return append([]string(nil), t.errs...)
}

// within returns the tab's context limited to d.
func (t *tab) within(d time.Duration) (context.Context, context.CancelFunc) {
	return context.WithTimeout(t.ctx, d)
}

// do runs steps within d, failing the test on an error.
func (t *tab) do(tb testing.TB, d time.Duration, steps ...chromedp.Action[chromedp.Void]) {
	tb.Helper()
	ctx, cancel := t.within(d)
	defer cancel()
	if err := chromedp.Do(ctx, steps...); err != nil {
		tb.Fatalf("browser: %v", err)
	}
}

// eval evaluates a JavaScript expression (awaiting a promise) and decodes
// its value into T.
func eval[T any](tb testing.TB, t *tab, d time.Duration, expr string) T {
	tb.Helper()
	ctx, cancel := t.within(d)
	defer cancel()
	v, err := chromedp.Run(ctx, chromedp.Evaluate[T](expr, chromedp.EvalAwaitPromise))
	if err != nil {
		tb.Fatalf("browser: evaluating %.80q: %v", expr, err)
	}
	return v
}

// pageState is what the probe script records (see testdata_probe.js).
type pageState struct {
	Done    int       `json:"done"`
	Failed  int       `json:"failed"`
	DoneAt  []float64 `json:"doneAt"`
	DrawnAt []float64 `json:"drawnAt"`
	ShownAt []float64 `json:"shownAt"`
	// ShownDrawnAt is the frame after each ShownAt: a result on the page,
	// ready or early (all but its pair plots, while the analysis goes on).
	ShownDrawnAt []float64 `json:"shownDrawnAt"`
	EditAt       float64   `json:"editAt"`
	Status       string    `json:"status"`
	Longest      float64   `json:"longest"`
	Longtasks    int       `json:"longtasks"`
}

func (t *tab) state(tb testing.TB) pageState {
	tb.Helper()
	raw := eval[[]byte](tb, t, 10*time.Second, `JSON.stringify(window.__bc ? window.__bc.summary() : null)`)
	var st pageState
	if string(raw) == `"null"` || string(raw) == "null" {
		return st
	}
	var s string
	if err := json.Unmarshal(raw, &s); err != nil {
		tb.Fatalf("probe state: %v (%s)", err, raw)
	}
	if err := json.Unmarshal([]byte(s), &st); err != nil {
		tb.Fatalf("probe state: %v (%s)", err, s)
	}
	return st
}

// waitDone waits until the page has finished more than after analyses and
// drawn the last one, and returns the probe's state. A failed analysis or a
// timeout fails the test.
func (t *tab) waitDone(tb testing.TB, after int, d time.Duration) pageState {
	tb.Helper()
	ctx, cancel := t.within(d)
	defer cancel()
	expr := fmt.Sprintf(`window.__bc && (window.__bc.failed > 0 || (window.__bc.done > %d && window.__bc.drawnAt.length >= window.__bc.done))`, after)
	if _, err := chromedp.Run(ctx, chromedp.Poll[chromedp.Void](expr,
		chromedp.WithPollingInterval(25*time.Millisecond), chromedp.WithPollingTimeout(d))); err != nil {
		st := t.state(tb)
		tb.Fatalf("waiting for results (after %d analyses): %v; status %q; console errors %v", after, err, st.Status, t.consoleErrors())
	}
	st := t.state(tb)
	if st.Failed > 0 {
		tb.Fatalf("the page reports a failed analysis: status %q", st.Status)
	}
	return st
}

// open navigates the tab to url and waits for the first result.
func (t *tab) open(tb testing.TB, url string) pageState {
	tb.Helper()
	t.do(tb, 60*time.Second, chromedp.Navigate(url))
	return t.waitDone(tb, 0, 90*time.Second)
}

// screenshot writes a PNG of the viewport (full=false) or the whole page
// into ../screenshots/name.
func (t *tab) screenshot(tb testing.TB, name string, full bool) {
	tb.Helper()
	ctx, cancel := t.within(30 * time.Second)
	defer cancel()
	var buf []byte
	var err error
	if full {
		buf, err = chromedp.Run(ctx, chromedp.FullScreenshot(100))
	} else {
		buf, err = chromedp.Run(ctx, chromedp.CaptureScreenshot())
	}
	if err != nil {
		tb.Fatalf("screenshot %s: %v", name, err)
	}
	dir := filepath.Join("..", "screenshots")
	if err := os.MkdirAll(dir, 0o755); err != nil {
		tb.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, name), buf, 0o644); err != nil {
		tb.Fatal(err)
	}
}

// jsString quotes s as a JavaScript string literal.
func jsString(s string) string {
	b, _ := json.Marshal(s)
	return string(b)
}

// editModel replaces the editor's text as typing would (an input event)
// and records the moment in the probe.
func (t *tab) editModel(tb testing.TB, text string) {
	tb.Helper()
	eval[bool](tb, t, 10*time.Second, `window.__bc.edit(`+jsString(text)+`)`)
}

// editorText returns the editor's text.
func (t *tab) editorText(tb testing.TB) string {
	tb.Helper()
	return eval[string](tb, t, 10*time.Second, `document.getElementById("bc-model").value`)
}

// exampleIndex returns the gallery position of an example.
func exampleIndex(t testing.TB, id string) int {
	for i, ex := range examples.All {
		if ex.ID == id {
			return i
		}
	}
	t.Fatalf("no example %q", id)
	return -1
}

// trimLines shortens a multi-line string for a failure message.
func trimLines(s string, n int) string {
	lines := strings.Split(s, "\n")
	if len(lines) > n {
		lines = append(lines[:n], "…")
	}
	return strings.Join(lines, "\n")
}
