//go:build browser && !(js && wasm)

package main

// Browser tests of what a careless or hostile user found: work lost to two
// links in a row or to a second tab, API arguments that ended the Go
// program, and link options beyond the engine's limits.

import (
	"encoding/json"
	"fmt"
	"strings"
	"testing"
	"time"

	"github.com/chromedp/chromedp"

	"bellcheck/app/share"
	"bellcheck/engine"
)

func TestBrowserRobust(t *testing.T) {
	exe := chromiumPath(t)
	dir := buildSite(t)
	srv := serveSite(t, dir, nil)
	b := startBrowser(t, exe, wideW, wideH)
	t.Run("TwoLinksOverWork", func(t *testing.T) { testTwoLinksOverWork(t, b, srv) })
	t.Run("TwoTabs", func(t *testing.T) { testTwoTabs(t, b, srv) })
	t.Run("APIArguments", func(t *testing.T) { testAPIArguments(t, b, srv) })
	t.Run("OverLimitLinks", func(t *testing.T) { testOverLimitLinks(t, b, srv) })
}

// historyTitles returns the titles of the page's history list.
const historyTitlesJS = `Array.from(document.querySelectorAll("#bc-history .history-title")).map((e) => e.textContent)`

// keptModels reads the history's entries from the tab's local storage and
// decodes them as the page does.
func keptModels(t *testing.T, tb *tab) []string {
	t.Helper()
	raw := eval[[]string](t, tb, 5*time.Second,
		`Object.keys(localStorage).filter((k) => k.startsWith("bellcheck.h.")).map((k) => localStorage.getItem(k))`)
	var out []string
	for _, r := range raw {
		var e struct {
			F string `json:"f"`
		}
		if err := json.Unmarshal([]byte(r), &e); err != nil {
			t.Fatalf("a history entry is not JSON: %q", r)
		}
		st, err := share.Decode(e.F)
		if err != nil {
			t.Fatalf("a history entry does not decode: %v", err)
		}
		out = append(out, st.Model)
	}
	return out
}

func has(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}

func linkTo(t *testing.T, st share.State) string {
	t.Helper()
	f, err := share.Encode(st)
	if err != nil {
		t.Fatal(err)
	}
	return f
}

// testTwoLinksOverWork: type a model, open link A, open link B (and a
// broken one), reload: the typed model is still kept, listed and offered.
func testTwoLinksOverWork(t *testing.T, b *browser, srv *siteServer) {
	typed := "param robust_typed\nld_normal(robust_typed, 1, 2)\n"
	linkA := linkTo(t, share.State{Model: "param from_a\nld_normal(from_a, 0, 1)\n"})
	linkB := linkTo(t, share.State{Model: "param from_b\nld_normal(from_b, 3, 1)\n"})
	tb := b.newTab(t, true)
	tb.do(t, 60*time.Second, chromedp.Navigate(srv.URL+"/"))
	tb.waitDoneExplained(t, 0, 90*time.Second)
	tb.editModel(t, typed)
	tb.waitDone(t, 1, 60*time.Second)
	for i, l := range []string{linkA, linkB} {
		eval[bool](t, tb, 5*time.Second, `(location.hash = `+jsString(l)+`, true)`)
		tb.waitDoneExplained(t, 2+i, 60*time.Second)
	}
	eval[bool](t, tb, 5*time.Second, `(location.hash = "b1.AAAA", true)`)
	time.Sleep(300 * time.Millisecond)
	if notice := eval[string](t, tb, 5*time.Second, `(document.querySelector(".notice-text") || {}).textContent || ""`); !strings.Contains(notice, "damaged") {
		t.Errorf("a broken link's notice: %q", notice)
	}
	if got := keptModels(t, tb); len(got) != 1 || got[0] != typed {
		t.Errorf("after two links the history holds %q, want only the typed model", got)
	}
	tb.do(t, 30*time.Second, chromedp.Reload())
	tb.waitDone(t, 0, 60*time.Second)
	if got := tb.editorText(t); !strings.Contains(got, "from_b") {
		t.Errorf("the reload shows %q, want link B's model", got)
	}
	titles := eval[[]string](t, tb, 5*time.Second, historyTitlesJS)
	if len(titles) != 1 || titles[0] != "param robust_typed" {
		t.Fatalf("the history lists %q, want the typed model", titles)
	}
	action := eval[string](t, tb, 5*time.Second, `(document.querySelector(".notice-action") || {}).textContent || ""`)
	if action != "Back to my model" {
		t.Errorf("the notice offers %q, want the typed model back", action)
	}
	eval[bool](t, tb, 5*time.Second, `(document.querySelector("#bc-history .history-open").click(), true)`)
	tb.waitDone(t, 1, 60*time.Second)
	if got := tb.editorText(t); got != typed {
		t.Errorf("restoring from the history gave %q", got)
	}
	if errs := tb.consoleErrors(); len(errs) > 0 {
		t.Errorf("console errors: %v", errs)
	}
}

// testTwoTabs: two tabs of one browser edit in turn; both models are kept
// (one storage key used to hold the work of both, the last writer winning).
func testTwoTabs(t *testing.T, b *browser, srv *siteServer) {
	one := "param robust_one\nld_normal(robust_one, 0, 1)\n"
	two := "param robust_two\nld_normal(robust_two, 5, 1)\n"
	t1 := b.newTab(t, false)
	t1.open(t, srv.URL+"/")
	t1.editModel(t, one)
	t1.waitDone(t, 1, 60*time.Second)
	t2 := b.newTab(t, false)
	t2.open(t, srv.URL+"/")
	t2.editModel(t, two)
	t2.waitDone(t, 1, 60*time.Second)
	t1.editModel(t, one+"# edited in the first tab\n")
	t1.waitDone(t, 2, 60*time.Second)
	// The page writes its state ui.PersistDelay after a check of typed
	// text, off the path to the result: wait for the write.
	var got []string
	for deadline := time.Now().Add(5 * time.Second); ; time.Sleep(100 * time.Millisecond) {
		got = keptModels(t, t1)
		if has(got, one+"# edited in the first tab\n") || time.Now().After(deadline) {
			break
		}
	}
	if !has(got, one+"# edited in the first tab\n") || !has(got, two) {
		t.Errorf("two tabs: the storage keeps %q, want both tabs' models", got)
	}
	// The second tab's list follows the first tab's writes (the storage
	// event).
	time.Sleep(300 * time.Millisecond)
	titles := eval[[]string](t, t2, 5*time.Second, historyTitlesJS)
	if !has(titles, "param robust_one") || !has(titles, "param robust_two") {
		t.Errorf("the second tab lists %q, want both models", titles)
	}
	for _, tt := range []*tab{t1, t2} {
		if errs := tt.consoleErrors(); len(errs) > 0 {
			t.Errorf("console errors: %v", errs)
		}
	}
}

// testAPIArguments: arguments with no JSON form reject the Promise with the
// reason and leave the Go program running.
func testAPIArguments(t *testing.T, b *browser, srv *siteServer) {
	tb := b.newTab(t, true)
	tb.open(t, srv.URL+"/")
	reject := func(call string) string {
		return eval[string](t, tb, 30*time.Second, call+`.then(() => "resolved", (e) => "rejected: " + String(e && e.message || e))`)
	}
	for _, c := range []struct{ call, want string }{
		{`window.bellcheck.analyse(10n)`, "argument 1 is a BigInt"},
		{`window.bellcheck.analyse("-x^2", {params: [{points: 10n}]})`, "argument 2 cannot be turned into JSON"},
		{`window.bellcheck.analyse("-x^2", {toJSON() { throw new Error("boom") }})`, "boom"},
		{`window.bellcheck.analyse(null)`, "modelText must be a string, got null"},
		{`window.bellcheck.analyse("-x^2", () => 1)`, "argument 2 is a function"},
		{`window.bellcheck.analyse(Symbol("s"))`, "argument 1 is a symbol"},
		{`window.bellcheck.timeGrid("-x^2-y^2", 10n)`, "BigInt"},
		{`window.bellcheck.analyse("-x^2-y^2", {params: [{points: 4001}]})`, "1 to 1501"},
	} {
		if got := reject(c.call); !strings.HasPrefix(got, "rejected: ") || !strings.Contains(got, c.want) {
			t.Errorf("%s: %q, want a rejection saying %q", c.call, got, c.want)
		}
	}
	// The Go program still runs: the API answers and the page analyses.
	out := eval[string](t, tb, 60*time.Second, `window.bellcheck.analyse("param x\nld_normal(x, 1, 2)\n").then((r) => r.params.join(","), (e) => "rejected: " + e.message)`)
	if out != "x" {
		t.Errorf("after the bad calls analyse gives %q", out)
	}
	tb.editModel(t, "param z\nld_normal(z, 0, 3)\n")
	tb.waitDone(t, 1, 60*time.Second)
	for _, e := range tb.consoleErrors() {
		if strings.Contains(e, "exited") || strings.Contains(e, "panic") {
			t.Errorf("console: %s", e)
		}
	}
}

// testOverLimitLinks: a link asking for more than the engine allows opens
// with the defaults for that option and says why.
func testOverLimitLinks(t *testing.T, b *browser, srv *siteServer) {
	f := func(v float64) *float64 { return &v }
	two := "param a\nparam b\nld_normal(a, 0, 1) + ld_normal(b, 1, 2)\n"
	one := "param a\nld_normal(a, 0, 1)\n"
	for _, c := range []struct {
		name  string
		st    share.State
		says  string
		facts string
	}{
		// engine.MaxAxisPoints(2) is 1501; with the defaults the nested
		// rule gives the exact results and the grid only scouts, at 81
		// points per axis in 2-D (engine's scoutPoints).
		{"points", share.State{Model: two, Params: []engine.ParamOptions{{Points: 4001}}}, "1 to 1501", "81 points"},
		{"huge box", share.State{Model: one, Params: []engine.ParamOptions{{Lo: f(-1e308), Hi: f(1e308)}}}, "wider than", "a ∈"},
		{"narrow box", share.State{Model: one, Params: []engine.ParamOptions{{Lo: f(1), Hi: f(1 + 1e-15)}}}, "too narrow", "a ∈"},
	} {
		tb := b.newTab(t, true)
		tb.open(t, srv.URL+"/#"+linkTo(t, c.st))
		notice := eval[string](t, tb, 5*time.Second, `(document.querySelector(".notice-text") || {}).textContent || ""`)
		if !strings.Contains(notice, c.says) || !strings.Contains(notice, "defaults are used") {
			t.Errorf("%s: notice %q, want the reason %q", c.name, notice, c.says)
		}
		st := eval[linkState](t, tb, 5*time.Second, linkStateJS)
		if !strings.Contains(st.Facts, c.facts) {
			t.Errorf("%s: grid facts %q", c.name, st.Facts)
		}
		tb.close()
	}
}

// waitDoneExplained is waitDone that names the page's error on a failure.
func (tb *tab) waitDoneExplained(t *testing.T, after int, d time.Duration) {
	t.Helper()
	ctx, cancel := tb.within(d)
	defer cancel()
	expr := fmt.Sprintf(`window.__bc && (window.__bc.failed > 0 || (window.__bc.done > %d && window.__bc.drawnAt.length >= window.__bc.done))`, after)
	if _, err := chromedp.Run(ctx, chromedp.Poll[chromedp.Void](expr,
		chromedp.WithPollingInterval(25*time.Millisecond), chromedp.WithPollingTimeout(d))); err != nil {
		st := tb.state(t)
		t.Fatalf("waiting for results (after %d analyses): %v; %d done, %d drawn, status %q; editor %q; console errors %v", after, err, st.Done, len(st.DrawnAt), st.Status, trimLines(tb.editorText(t), 2), tb.consoleErrors())
	}
	if st := tb.state(t); st.Failed > 0 {
		t.Fatalf("the analysis failed: %q", eval[string](t, tb, 5*time.Second, `(document.querySelector(".diag-error") || {}).textContent || "no error shown"`))
	}
}
