//go:build browser && !(js && wasm)

package main

// Browser tests of work kept when the page goes away, a long analysis
// stopped by the user, the embed view's notice for over-limit link
// settings, and the time bound of the JavaScript API.

import (
	"fmt"
	"math"
	"strings"
	"testing"
	"time"

	"bellcheck/app/share"
	"bellcheck/engine"
)

func TestBrowserBounds(t *testing.T) {
	exe := chromiumPath(t)
	dir := buildSite(t)
	srv := serveSite(t, dir, nil)
	b := startBrowser(t, exe, wideW, wideH)
	t.Run("LeaveRightAfterTyping", func(t *testing.T) { testLeaveRightAfterTyping(t, b, srv) })
	t.Run("StopLongAnalysis", func(t *testing.T) { testStopLongAnalysis(t, b, srv) })
	t.Run("EmbedOverLimitNotice", func(t *testing.T) { testEmbedOverLimitNotice(t, b, srv) })
	t.Run("APITimeBound", func(t *testing.T) { testAPITimeBound(t, b, srv) })
}

// testLeaveRightAfterTyping: type, then at once navigate away (or close
// the tab), reopen: the text typed is there. The page waits CheckDelay and
// PersistDelay (400 ms in all) before it saves a keystroke, so without the
// save on pagehide the last edit was lost.
func testLeaveRightAfterTyping(t *testing.T, b *browser, srv *siteServer) {
	// Navigate away within a few milliseconds of typing.
	typed := "param leave_nav\nld_normal(leave_nav, 2, 1)\n"
	tb := b.newTab(t, true)
	tb.open(t, srv.URL+"/")
	// The navigation starts in the same task as the edit.
	eval[bool](t, tb, 5*time.Second, `(window.__bc.edit(`+jsString(typed)+`), setTimeout(() => location.assign("about:blank"), 0), true)`)
	time.Sleep(time.Second)
	tb.open(t, srv.URL+"/")
	if got := tb.editorText(t); got != typed {
		t.Errorf("after navigating away at once and back: the editor holds %q, want %q", got, typed)
	}
	if got := keptModels(t, tb); !has(got, typed) {
		t.Errorf("the history holds %q, want the text typed", got)
	}

	// Close the tab within a few milliseconds of typing; a new tab of the
	// same browser opens the newest kept model.
	closed := "param leave_close\nld_normal(leave_close, -1, 1)\n"
	t1 := b.newTab(t, false)
	t1.open(t, srv.URL+"/")
	eval[bool](t, t1, 5*time.Second, `window.__bc.edit(`+jsString(closed)+`)`)
	t1.close()
	t2 := b.newTab(t, false)
	t2.open(t, srv.URL+"/")
	if got := keptModels(t, t2); !has(got, closed) {
		t.Errorf("after closing the tab at once the history holds %q, want the text typed", got)
	}
	if got := t2.editorText(t); got != closed {
		t.Errorf("a new tab shows %q, want the model typed in the closed tab", got)
	}
	for _, tt := range []*tab{tb, t2} {
		if errs := tt.consoleErrors(); len(errs) > 0 {
			t.Errorf("console errors: %v", errs)
		}
	}
}

// slowModel is a 2-D model over 300 observations: on a 501 x 501 grid
// it takes seconds, forecast under the page's 30 s bound.
func slowModel() share.State {
	var ys []string
	for i := 0; i < 300; i++ {
		ys = append(ys, fmt.Sprintf("%.3f", 1+math.Sin(float64(i))))
	}
	src := "y = [" + strings.Join(ys, ", ") + "]\nparam m\nparam s in [0, inf]\n" +
		"sum(ld_student(y, 4, m, s)) + ld_normal(m, 0, 10) + ld_gamma(s, 2, 1)\n"
	// A Student-t likelihood: a normal one folds into a few sums of the
	// data, and its analysis ended within half a second on a quiet machine
	// (Stop and the API's bound then had nothing to stop). At 301 points a
	// side it is forecast at 2 to 16 s in the page, under the page's 30 s:
	// the forecast's time per point, taken just after the page loads (V8's
	// baseline tier), swung from about 20 to 173 us between runs on a
	// loaded 2-core machine, and at 501 a side the page now and then
	// refused the analysis as too long, with no Stop to press.
	return share.State{Model: src, Params: []engine.ParamOptions{{Points: 301}, {Points: 301}}}
}

// testStopLongAnalysis: a long analysis shows a Stop button beside its
// progress; Stop cancels it, says so, and loses nothing typed.
func testStopLongAnalysis(t *testing.T, b *browser, srv *siteServer) {
	tb := b.newTab(t, true)
	tb.open(t, srv.URL+"/")
	st := slowModel()
	eval[bool](t, tb, 5*time.Second, `(location.hash = `+jsString(linkTo(t, st))+`, true)`)
	began := time.Now()
	// The button shows once the analysis has run for ProgressDelay.
	ok := eval[bool](t, tb, 40*time.Second, `new Promise((resolve) => {
	  const t0 = performance.now();
	  const tick = () => {
	    if (document.getElementById("bc-stop")) return resolve(true);
	    if (performance.now() - t0 > 30000 || window.__bc.done > 1) return resolve(false);
	    setTimeout(tick, 20);
	  };
	  tick();
	})`)
	if !ok {
		t.Fatalf("no Stop button while the analysis ran (status %q, notice %q)", tb.state(t).Status,
			eval[string](t, tb, 5*time.Second, `(document.querySelector(".notice-text") || {}).textContent || ""`))
	}
	shown := time.Since(began)
	time.Sleep(500 * time.Millisecond)
	eval[bool](t, tb, 5*time.Second, `(document.getElementById("bc-stop").click(), true)`)
	// The page stops and says so.
	state := eval[string](t, tb, 10*time.Second, `new Promise((resolve) => {
	  const t0 = performance.now();
	  const tick = () => {
	    const s = document.getElementById("bc-output").dataset.state;
	    if (s !== "running" || performance.now() - t0 > 5000) return resolve(s);
	    setTimeout(tick, 20);
	  };
	  tick();
	})`)
	if state != "stopped" {
		t.Errorf("after Stop the results area is %q, want stopped", state)
	}
	notice := eval[string](t, tb, 5*time.Second, `(document.querySelector(".notice-text") || {}).textContent || ""`)
	if !strings.Contains(notice, "You stopped the analysis") {
		t.Errorf("the notice after Stop: %q", notice)
	}
	status := eval[string](t, tb, 5*time.Second, `document.querySelector(".run-status").textContent`)
	if !strings.Contains(status, "stopped after") || !eval[bool](t, tb, 5*time.Second, `!!document.getElementById("bc-run-again")`) {
		t.Errorf("the status line after Stop: %q", status)
	}
	if got := tb.editorText(t); got != st.Model {
		t.Errorf("Stop changed the text: %q", trimLines(got, 3))
	}
	t.Logf("Stop button shown %.1f s after opening the link; %s", shown.Seconds(), notice)
	// The page goes on: a new text is analysed.
	done := tb.state(t).Done
	tb.editModel(t, "param after_stop\nld_normal(after_stop, 0, 1)\n")
	tb.waitDone(t, done, 60*time.Second)
	if errs := tb.consoleErrors(); len(errs) > 0 {
		t.Errorf("console errors: %v", errs)
	}
}

// testEmbedOverLimitNotice: an embed link asking for more grid points
// than the engine allows opens with the default and a notice saying why.
func testEmbedOverLimitNotice(t *testing.T, b *browser, srv *siteServer) {
	two := "param a\nparam b\nld_normal(a, 0, 1) + ld_normal(b, 1, 2)\n"
	st := share.State{Model: two, Params: []engine.ParamOptions{{Points: 4001}}, View: share.View{Embed: true}}
	tb := b.newTab(t, true)
	tb.open(t, srv.URL+"/#"+linkTo(t, st))
	if !eval[bool](t, tb, 5*time.Second, `document.querySelector(".page.embed") !== null`) {
		t.Fatal("the link did not open the embed view")
	}
	notice := eval[string](t, tb, 5*time.Second, `(document.querySelector(".notice-text") || {}).textContent || ""`)
	// engine.MaxAxisPoints(2) is 1501.
	if !strings.Contains(notice, "1 to 1501") || !strings.Contains(notice, "defaults are used") {
		t.Errorf("the embed's notice: %q", notice)
	}
	if errs := tb.consoleErrors(); len(errs) > 0 {
		t.Errorf("console errors: %v", errs)
	}
}

// testAPITimeBound: bellcheck.analyse with max_seconds rejects an analysis
// that would take longer (forecast, or stopped when it overruns) with the
// reason, and the calculator goes on.
func testAPITimeBound(t *testing.T, b *browser, srv *siteServer) {
	tb := b.newTab(t, true)
	tb.open(t, srv.URL+"/")
	st := slowModel()
	call := fmt.Sprintf(`window.bellcheck.analyse(%s, {params: [{points: 1001}, {points: 1001}], max_seconds: 0.5})`, jsString(st.Model))
	began := time.Now()
	got := eval[string](t, tb, 60*time.Second, call+`.then(() => "resolved", (e) => "rejected: " + e.message)`)
	if !strings.HasPrefix(got, "rejected: ") || !strings.Contains(got, "time bound") || !strings.Contains(got, "max_seconds 0.5") {
		t.Errorf("an analysis beyond max_seconds: %q", got)
	}
	t.Logf("rejected after %.1f s: %s", time.Since(began).Seconds(), got)
	bad := eval[string](t, tb, 10*time.Second, `window.bellcheck.analyse("-x^2", {max_seconds: -1}).then(() => "resolved", (e) => "rejected: " + e.message)`)
	if !strings.Contains(bad, "max_seconds") {
		t.Errorf("max_seconds -1: %q", bad)
	}
	out := eval[string](t, tb, 60*time.Second, `window.bellcheck.analyse("param x\nld_normal(x, 1, 2)\n", {max_seconds: 60}).then((r) => r.params.join(","), (e) => "rejected: " + e.message)`)
	if out != "x" {
		t.Errorf("after the bound, analyse gives %q", out)
	}
	if errs := tb.consoleErrors(); len(errs) > 0 {
		t.Errorf("console errors: %v", errs)
	}
}
