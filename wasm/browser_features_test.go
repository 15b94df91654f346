//go:build browser && !(js && wasm)

package main

// Browser tests of the embed view, the exports, typing during a 4-D
// analysis and offline use.

import (
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"encoding/xml"
	"fmt"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"
	"time"

	cdpbrowser "github.com/chromedp/cdproto/browser"
	"github.com/chromedp/chromedp"

	"bellcheck/app/examples"
	"bellcheck/app/share"
	"bellcheck/engine"
	"bellcheck/engine/model"
)

// embedHostHTML is a host page with the embed view in an iframe; it records
// every message the frame posts.
const embedHostHTML = `<!doctype html><html><head><meta charset="utf-8"><title>host</title></head><body>
<script>
window.__msgs = [];
window.addEventListener("message", (e) => {
  if (e.source === document.getElementById("calc").contentWindow)
    window.__msgs.push({data: e.data, origin: e.origin, at: performance.now()});
});
</script>
<iframe id="calc" style="width: 700px; height: 300px; border: 0" src="SRC"></iframe>
</body></html>`

type postedMessage struct {
	Data   any     `json:"data"`
	Origin string  `json:"origin"`
	At     float64 `json:"at"`
}

// testEmbed: the embed view (chosen in the link) posts its content height
// to the parent page, and nothing else.
func testEmbed(t *testing.T, b *browser, srv *siteServer) {
	ex, _ := examples.ByID("banana")
	frag, err := share.Encode(share.State{Model: ex.Source, View: share.View{Embed: true}})
	if err != nil {
		t.Fatal(err)
	}
	hostDir := t.TempDir()
	html := strings.Replace(embedHostHTML, "SRC", srv.URL+"/#"+frag, 1)
	if err := os.WriteFile(filepath.Join(hostDir, "host.html"), []byte(html), 0o644); err != nil {
		t.Fatal(err)
	}
	// The host is served from another origin, as a wiki page would be.
	host := serveSite(t, hostDir, nil)
	tb := b.newTab(t, true)
	tb.do(t, 60*time.Second, chromedp.Navigate(host.URL+"/host.html"))
	// Until the embed view lands (issue 5; web/ then holds an example host
	// page) a short wait shows it is absent.
	landed := webHasFile("*embed*.html") || webHasFile("*host*.html")
	wait := 10 * time.Second
	if landed {
		wait = 45 * time.Second
	}
	ctx, cancel := tb.within(wait + 5*time.Second)
	_, err = chromedp.Run(ctx, chromedp.Poll[chromedp.Void](`window.__msgs.length > 0`,
		chromedp.WithPollingInterval(50*time.Millisecond), chromedp.WithPollingTimeout(wait)))
	cancel()
	if err != nil {
		if !landed {
			t.Skip("the embed view posts no message yet and web/ has no example host page (issue 5 not landed): nothing to test")
		}
		t.Fatalf("the embed view posted no message within %s: %v", wait, err)
	}
	// Wait for the frame's first result (the probe runs in every frame),
	// then for the resize it causes to be posted.
	frameHeight := -1.0
	ctx, cancel = tb.within(90 * time.Second)
	nodes, err := chromedp.Run(ctx, chromedp.Nodes(chromedp.CSS("#calc")))
	if err == nil && len(nodes) == 1 {
		_, err = chromedp.Run(ctx, chromedp.Poll[chromedp.Void](`window.__bc && window.__bc.drawnAt.length > 0`,
			chromedp.WithPollingInFrame(nodes[0]), chromedp.WithPollingInterval(50*time.Millisecond), chromedp.WithPollingTimeout(60*time.Second)))
		if err == nil {
			time.Sleep(500 * time.Millisecond)
			// The frame's own document height, read inside the frame (the
			// host cannot: the frame is of another origin).
			frameHeight, err = chromedp.Run(ctx, chromedp.Poll[float64](`document.body ? document.body.scrollHeight : 0`,
				chromedp.WithPollingInFrame(nodes[0]), chromedp.WithPollingTimeout(5*time.Second)))
		}
	}
	cancel()
	if err != nil {
		t.Fatalf("the embedded calculator showed no result: %v", err)
	}
	msgs := eval[[]postedMessage](t, tb, 5*time.Second, `window.__msgs`)
	var last float64
	for _, m := range msgs {
		if m.Origin != srv.URL {
			t.Errorf("a message from origin %q, want %q", m.Origin, srv.URL)
		}
		h, ok := heightOf(m.Data)
		if !ok {
			t.Errorf("the embed view posted %v: want only its height", m.Data)
			continue
		}
		last = h
	}
	if last <= 100 {
		t.Errorf("last posted height %v px, want the content's height", last)
	}
	// The last height posted must be what the frame needs to show its
	// content whole (within rounding and margins), or the host would cut
	// the calculator off.
	if math.Abs(last-frameHeight) > 0.02*frameHeight+8 {
		t.Errorf("last posted height %v px, but the frame's content is %v px tall (messages %v)", last, frameHeight, msgs)
	}
	t.Logf("%d messages; last height %v px; the frame's body %v px", len(msgs), last, frameHeight)
}

// heightOf reads a posted height: a number, or an object whose only number
// is the height, beside string tags (the page sends
// {bellcheck: "height", value: N}).
func heightOf(v any) (float64, bool) {
	switch x := v.(type) {
	case float64:
		return x, true
	case map[string]any:
		var h float64
		found := false
		for _, val := range x {
			switch n := val.(type) {
			case float64:
				if found {
					return 0, false
				}
				h, found = n, true
			case string:
				// a tag naming the message
			default:
				return 0, false
			}
		}
		return h, found
	}
	return 0, false
}

// exportButtons are the page's export controls (app/ui's IDs) and the
// format each saves.
var exportButtons = []struct{ id, format string }{
	{"bc-export-json", "json"}, {"bc-export-csv", "csv"}, {"bc-export-svg", "svg"}, {"bc-export-png", "png"},
}

// testExport: each export control downloads a file that is valid in its
// format; the JSON is the command line's for the same model.
func testExport(t *testing.T, b *browser, srv *siteServer) {
	tb := b.newTab(t, true)
	tb.open(t, srv.URL+"/")
	present := eval[int](t, tb, 5*time.Second, `document.getElementById("bc-export-json") ? 1 : 0`)
	if present == 0 {
		t.Skip("the page has no export controls yet (looked for #bc-export-json): nothing to test")
	}
	dl := t.TempDir()
	ctx, cancel := tb.within(10 * time.Second)
	_, err := chromedp.CallBrowser(ctx, cdpbrowser.SetDownloadBehavior, cdpbrowser.SetDownloadBehaviorParams{
		Behavior: cdpbrowser.SetDownloadBehaviorBehaviorAllowAndName, DownloadPath: dl, BrowserContextID: chromedp.FromContext(tb.ctx).BrowserContextID,
	})
	cancel()
	if err != nil {
		t.Fatalf("allowing downloads: %v", err)
	}
	ex, _ := examples.ByID(examples.Default)
	cli := cliResult(t, ex.Source)
	for _, e := range exportButtons {
		n := len(listFiles(dl))
		ok := eval[bool](t, tb, 5*time.Second, `(() => { const b = document.getElementById(`+jsString(e.id)+`);
		  if (!b || b.disabled) return false; b.click(); return true; })()`)
		if !ok {
			t.Errorf("export %s: no enabled control #%s", e.format, e.id)
			continue
		}
		file := waitNewFile(t, dl, n, 20*time.Second)
		if file == "" {
			t.Errorf("export %s: no file downloaded in 20 s", e.format)
			continue
		}
		data, err := os.ReadFile(file)
		if err != nil {
			t.Fatal(err)
		}
		if err := validExport(e.format, data, cli); err != nil {
			t.Errorf("export %s: %v", e.format, err)
		} else {
			t.Logf("export %s: %d bytes, valid", e.format, len(data))
		}
	}

	// The table copied as Markdown and as LaTeX: the clipboard's writeText
	// is replaced by a recorder (a headless browser has no clipboard to
	// read back).
	eval[bool](t, tb, 5*time.Second, `(() => { window.__copied = [];
	  navigator.clipboard.writeText = (t) => { window.__copied.push(t); return Promise.resolve(); }; return true; })()`)
	for _, c := range []struct{ id, format string }{{"bc-copy-md", "markdown"}, {"bc-copy-latex", "latex"}} {
		n := eval[int](t, tb, 5*time.Second, `window.__copied.length`)
		if !eval[bool](t, tb, 5*time.Second, `(() => { const b = document.getElementById(`+jsString(c.id)+`);
		  if (!b || b.disabled) return false; b.click(); return true; })()`) {
			t.Errorf("copy %s: no enabled control #%s", c.format, c.id)
			continue
		}
		ctx, cancel := tb.within(10 * time.Second)
		text, err := chromedp.Run(ctx, chromedp.Poll[string](fmt.Sprintf(`window.__copied.length > %d && window.__copied[%d]`, n, n),
			chromedp.WithPollingInterval(20*time.Millisecond), chromedp.WithPollingTimeout(5*time.Second)))
		cancel()
		if err != nil {
			t.Errorf("copy %s: nothing written to the clipboard: %v", c.format, err)
			continue
		}
		if err := validTable(c.format, text); err != nil {
			t.Errorf("copy %s: %v\n%s", c.format, err, trimLines(text, 8))
		}
	}
}

// validTable checks a copied table: Markdown rows of one width with the
// separator row second (in each table, where the text holds several: the
// results and the curvatures, apart by a blank line); a LaTeX tabular
// environment whose rows end in \\.
func validTable(format, text string) error {
	switch format {
	case "markdown":
		for _, block := range strings.Split(strings.TrimSpace(text), "\n\n") {
			var rows []string
			for _, l := range strings.Split(block, "\n") {
				if strings.HasPrefix(strings.TrimSpace(l), "|") {
					rows = append(rows, strings.TrimSpace(l))
				}
			}
			if len(rows) == 0 {
				continue // a note under a table
			}
			if len(rows) < 3 {
				return fmt.Errorf("%d table rows", len(rows))
			}
			if strings.Trim(rows[1], "|-: ") != "" {
				return fmt.Errorf("second row %q is not a separator", rows[1])
			}
			w := strings.Count(rows[0], "|")
			for _, r := range rows {
				if strings.Count(strings.ReplaceAll(r, `\|`, ""), "|") != w {
					return fmt.Errorf("row %q has another width than the header", r)
				}
			}
		}
	case "latex":
		if !strings.Contains(text, `\begin{tabular}`) || !strings.Contains(text, `\end{tabular}`) {
			return fmt.Errorf("no tabular environment")
		}
		if strings.Count(text, `\\`) < 3 {
			return fmt.Errorf("fewer than three rows ending in \\\\")
		}
	}
	return nil
}

func listFiles(dir string) []string {
	var out []string
	entries, _ := os.ReadDir(dir)
	for _, e := range entries {
		if !e.IsDir() && !strings.HasSuffix(e.Name(), ".crdownload") {
			out = append(out, filepath.Join(dir, e.Name()))
		}
	}
	sort.Strings(out)
	return out
}

// waitNewFile waits for a download beyond the had files already in dir and
// returns its path once its size holds still ("" after d).
func waitNewFile(t *testing.T, dir string, had int, d time.Duration) string {
	deadline := time.Now().Add(d)
	var last string
	lastSize := int64(-1)
	for time.Now().Before(deadline) {
		if files := listFiles(dir); len(files) > had {
			newest, newestT := "", time.Time{}
			for _, f := range files {
				if st, err := os.Stat(f); err == nil && st.ModTime().After(newestT) {
					newest, newestT = f, st.ModTime()
				}
			}
			if st, err := os.Stat(newest); err == nil {
				if newest == last && st.Size() == lastSize && st.Size() > 0 {
					return newest
				}
				last, lastSize = newest, st.Size()
			}
		}
		time.Sleep(100 * time.Millisecond)
	}
	return ""
}

// validExport checks a downloaded file: JSON with the command line's
// fields, CSV with rows of one width, SVG that is well-formed XML with an
// svg root, PNG that decodes.
func validExport(format string, data []byte, cli cliJSON) error {
	switch format {
	case "json":
		var r cliJSON
		if err := json.Unmarshal(data, &r); err != nil {
			return err
		}
		if fmt.Sprint(r.Params) != fmt.Sprint(cli.Params) || r.Exact.LogZ == nil || cli.Exact.LogZ == nil {
			return fmt.Errorf("JSON with params %v and log_z %v; the command line's has %v", r.Params, r.Exact.LogZ, cli.Params)
		}
		// The same analysis natively and in WebAssembly: equal but for
		// rounding.
		if d := math.Abs(*r.Exact.LogZ - *cli.Exact.LogZ); d > 1e-9*math.Max(1, math.Abs(*cli.Exact.LogZ)) {
			return fmt.Errorf("exact.log_z %v, the command line gives %v", *r.Exact.LogZ, *cli.Exact.LogZ)
		}
		for _, k := range []string{"laplace", "reverse_kl", "mean_field", "forward_kl"} {
			if (r.Fits[k] == nil) != (cli.Fits[k] == nil) {
				return fmt.Errorf("fit %s: present %v, in the command line's %v", k, r.Fits[k] != nil, cli.Fits[k] != nil)
			}
		}
	case "csv":
		recs, err := csv.NewReader(bytes.NewReader(data)).ReadAll()
		if err != nil {
			return err
		}
		// encoding/csv already rejects rows of differing width.
		if len(recs) < 2 || len(recs[0]) < 2 {
			return fmt.Errorf("%d CSV records, want a header and rows of two fields or more", len(recs))
		}
	case "svg":
		dec := xml.NewDecoder(bytes.NewReader(data))
		root := ""
		for {
			tok, err := dec.Token()
			if err != nil {
				if root == "" {
					return fmt.Errorf("no root element: %v", err)
				}
				if err.Error() != "EOF" {
					return err
				}
				break
			}
			if se, ok := tok.(xml.StartElement); ok && root == "" {
				root = se.Name.Local
			}
		}
		if root != "svg" {
			return fmt.Errorf("root element %q", root)
		}
	case "png":
		img, err := png.Decode(bytes.NewReader(data))
		if err != nil {
			return err
		}
		if b := img.Bounds(); b.Dx() < 50 || b.Dy() < 50 {
			return fmt.Errorf("PNG of %v", b)
		}
	}
	return nil
}

// testTyping: typing stays responsive while a 4-D analysis runs. The test
// types into the editor in bursts, pausing past the check delay so that an
// analysis starts between bursts, and measures the browser's long tasks
// and each keystroke's round trip (the browser acknowledges a key after
// the page handled it). A frozen page (a task over a second) fails; the
// measurements are logged (the 100 ms aim of the page is a speed target,
// reported by make bench).
func testTyping(t *testing.T, b *browser, srv *siteServer) {
	ex, ok := examples.ByID("clock")
	if !ok {
		t.Fatal("no 4-D example clock")
	}
	tb := b.newTab(t, true)
	first := tb.open(t, srv.URL+"/")
	k := exampleIndex(t, ex.ID)
	eval[bool](t, tb, 5*time.Second, fmt.Sprintf(`(document.querySelectorAll("ul.gallery button.ex")[%d].click(), true)`, k))
	st := tb.waitDone(t, first.Done, 120*time.Second)
	full := st.DoneAt[len(st.DoneAt)-1]
	// Put the caret at the end of the text (after its last newline).
	eval[bool](t, tb, 5*time.Second, `(() => { const e = document.getElementById("bc-model"); e.focus();
	  e.setSelectionRange(e.value.length, e.value.length); return true; })()`)
	t0 := eval[float64](t, tb, 5*time.Second, `performance.now()`)
	typed := "# typed while the analysis runs"
	var acks []time.Duration
	words := strings.SplitAfter(typed, " ")
	for _, w := range words {
		// Let the check delay pass so an analysis is running.
		time.Sleep(250 * time.Millisecond)
		for _, r := range w {
			began := time.Now()
			tb.do(t, 30*time.Second, chromedp.KeyEvent(string(r)))
			acks = append(acks, time.Since(began))
			time.Sleep(40 * time.Millisecond)
		}
	}
	t1 := eval[float64](t, tb, 5*time.Second, `performance.now()`)
	type typingReport struct {
		Longest   float64      `json:"longest"`
		Tasks     int          `json:"tasks"`
		Observer  bool         `json:"observer"`
		Analysing int          `json:"analysing"`
		Log       [][2]any     `json:"log"`
		Text      string       `json:"text"`
		Tasklist  [][2]float64 `json:"tasklist"`
	}
	rep := eval[typingReport](t, tb, 5*time.Second, fmt.Sprintf(`(() => {
	  const b = window.__bc, t0 = %f, t1 = %f;
	  const tasks = b.tasks.filter(([s, d]) => s + d >= t0 && s <= t1);
	  return {longest: b.longestSince(t0), tasks: tasks.length, observer: b.longtaskObserver, tasklist: tasks,
	    analysing: b.log.filter(([at, s]) => at >= t0 && at <= t1 && s.startsWith("analysing")).length,
	    log: b.log.filter(([at]) => at >= t0), text: document.getElementById("bc-model").value};
	})()`, t0, t1))
	if !rep.Observer {
		t.Error("the browser has no long-task observer: the longest task was not measured")
	}
	if want := ex.Source + typed; rep.Text != want {
		t.Errorf("the editor holds\n%s\nwant\n%s", trimLines(rep.Text, 20), want)
	}
	if rep.Analysing == 0 {
		t.Errorf("no analysis ran while typing (status log %v)", rep.Log)
	}
	sort.Slice(acks, func(i, j int) bool { return acks[i] < acks[j] })
	worstAck := acks[len(acks)-1]
	medianAck := acks[len(acks)/2]
	t.Logf("4-D analysis alone: %.0f ms to the first result; while typing %d keys over %.1f s: %d analyses started, %d long tasks, longest %.0f ms; key round trip median %s, worst %s",
		full, len(acks), (t1-t0)/1000, rep.Analysing, rep.Tasks, rep.Longest, medianAck.Round(time.Millisecond), worstAck.Round(time.Millisecond))
	if rep.Longest > 1000 || worstAck > 2*time.Second {
		t.Errorf("the page froze while typing: longest task %.0f ms, slowest key %s (long tasks %v)", rep.Longest, worstAck, rep.Tasklist)
	}
	// The analysis of the final text completes.
	ctx, cancel := tb.within(120 * time.Second)
	_, err := chromedp.Run(ctx, chromedp.Poll[chromedp.Void](readyJS(ex.Source+typed, []string{"offset", "rate", "ageing", "noise"}),
		chromedp.WithPollingInterval(50*time.Millisecond), chromedp.WithPollingTimeout(120*time.Second)))
	cancel()
	if err != nil {
		t.Errorf("no result for the typed text: %v", err)
	}
	if errs := tb.consoleErrors(); len(errs) > 0 {
		t.Errorf("console errors: %v", errs)
	}
}

// cachedJS reports whether a service worker controls the page and its
// cache holds the wasm file.
const cachedJS = `(async () => {
  if (!navigator.serviceWorker || !navigator.serviceWorker.controller) return false;
  for (const k of await caches.keys()) {
    const reqs = await (await caches.open(k)).keys();
    if (reqs.some((r) => r.url.endsWith("/web/app.wasm"))) return true;
  }
  return false;
})()`

// testOffline: after a first visit, with the server stopped, a reload still
// shows the calculator and computes.
func testOffline(t *testing.T, b *browser, dir string) {
	srv := serveSite(t, dir, nil)
	tb := b.newTab(t, true)
	tb.open(t, srv.URL+"/")
	ctx, cancel := tb.within(60 * time.Second)
	_, err := chromedp.Run(ctx, chromedp.Poll[chromedp.Void](cachedJS,
		chromedp.WithPollingInterval(200*time.Millisecond), chromedp.WithPollingTimeout(60*time.Second)))
	cancel()
	if err != nil {
		t.Fatalf("the service worker did not take control with the wasm cached: %v", err)
	}
	srv.Close()
	if !serverDown(srv.URL + "/") {
		t.Fatal("the server still answers after Close")
	}
	reload := func(ctx context.Context) error { return chromedp.Do(ctx, chromedp.Reload()) }
	ctx, cancel = tb.within(60 * time.Second)
	err = reload(ctx)
	cancel()
	if err != nil {
		t.Fatalf("reload offline: %v", err)
	}
	st := tb.waitDone(t, 0, 90*time.Second)
	tab := tb.table(t)
	if len(tab.Sections) < 2 || tab.Stale {
		t.Errorf("offline reload: table sections %v (stale %v)", titles(tab), tab.Stale)
	}
	ex, _ := examples.ByID(examples.Default)
	if got := tb.editorText(t); got != ex.Source {
		t.Errorf("offline reload: the editor holds %q", trimLines(got, 5))
	}
	// And it computes: an edit gives a new result with the server down.
	tb.editModel(t, "-x^2/2\n")
	tb.waitDone(t, st.Done, 30*time.Second)
	tab = tb.table(t)
	if len(tab.Sections) == 0 || tab.Sections[0].Title != "x" {
		t.Errorf("offline edit: table sections %v", titles(tab))
	}
}

// testJSAPI: window.bellcheck.analyse gives the command line's JSON for the
// same model and options (the same engine, in WebAssembly), and rejects a
// broken model with the place of its first problem.
func testJSAPI(t *testing.T, b *browser, srv *siteServer) {
	tb := b.newTab(t, true)
	tb.open(t, srv.URL+"/")
	if !eval[bool](t, tb, 5*time.Second, `!!(window.bellcheck && typeof window.bellcheck.analyse === "function")`) {
		t.Skip("the page has no window.bellcheck.analyse yet: nothing to test")
	}
	ex, _ := examples.ByID("decay")
	opts := engine.Options{Params: []engine.ParamOptions{{Scale: engine.Log}}}
	optJSON, _ := json.Marshal(opts)
	got := eval[[]byte](t, tb, 120*time.Second, `window.bellcheck.analyse(`+jsString(ex.Source)+`, `+string(optJSON)+`).then((r) => JSON.stringify(r))`)
	var gotText string
	if err := json.Unmarshal(got, &gotText); err != nil {
		t.Fatalf("analyse's answer: %v", err)
	}
	m, err := model.Parse(ex.Source)
	if err != nil {
		t.Fatal(err)
	}
	res, err := engine.Analyse(context.Background(), m, opts, nil)
	if err != nil {
		t.Fatal(err)
	}
	want, err := json.Marshal(res)
	if err != nil {
		t.Fatal(err)
	}
	var a, w any
	if err := json.Unmarshal([]byte(gotText), &a); err != nil {
		t.Fatalf("analyse's answer is not JSON: %v", err)
	}
	if err := json.Unmarshal(want, &w); err != nil {
		t.Fatal(err)
	}
	var problems []string
	n := sameJSON("", a, w, &problems)
	for _, p := range problems {
		t.Error(p)
	}
	t.Logf("analyse: %d values equal to the native engine's", n)

	msg := eval[string](t, tb, 30*time.Second, `window.bellcheck.analyse("a = 1\n-x^2/2 + lgama(x)\n").then(() => "resolved", (e) => String(e && e.message || e))`)
	// "lgama" starts at line 2, column 10 (counted by hand).
	if !strings.Contains(msg, "2:10") || !strings.Contains(msg, "lgama") {
		t.Errorf("analyse of a broken model: %q, want a rejection at 2:10 naming lgama", msg)
	}
}

// sameJSON compares two decoded JSON values, numbers to a relative 1e-9
// (the engine natively and in WebAssembly: equal but for rounding; error
// estimates, which are rounding noise where a quantity is resolved, to an
// absolute 1e-10), skipping the timings. It returns the numbers compared.
func sameJSON(path string, a, b any, problems *[]string) int {
	if strings.HasSuffix(path, ".timing_ms") {
		return 0
	}
	switch x := b.(type) {
	case map[string]any:
		y, ok := a.(map[string]any)
		if !ok {
			*problems = append(*problems, fmt.Sprintf("%s: %T, want an object", path, a))
			return 0
		}
		n := 0
		for k, v := range x {
			if _, ok := y[k]; !ok {
				*problems = append(*problems, fmt.Sprintf("%s.%s missing", path, k))
				continue
			}
			n += sameJSON(path+"."+k, y[k], v, problems)
		}
		for k := range y {
			if _, ok := x[k]; !ok {
				*problems = append(*problems, fmt.Sprintf("%s.%s not in the command line's JSON", path, k))
			}
		}
		return n
	case []any:
		y, ok := a.([]any)
		if !ok || len(y) != len(x) {
			*problems = append(*problems, fmt.Sprintf("%s: %v, want %d elements", path, a, len(x)))
			return 0
		}
		n := 0
		for i := range x {
			n += sameJSON(fmt.Sprintf("%s.%d", path, i), y[i], x[i], problems)
		}
		return n
	case float64:
		y, ok := a.(float64)
		tol := 1e-9 * math.Max(1, math.Abs(x))
		if strings.Contains(path, "err") {
			tol = math.Max(tol, 1e-10)
		}
		if !ok || math.Abs(y-x) > tol {
			*problems = append(*problems, fmt.Sprintf("%s: %v, the native engine gives %v", path, a, x))
		}
		return 1
	default:
		if fmt.Sprint(a) != fmt.Sprint(b) {
			*problems = append(*problems, fmt.Sprintf("%s: %v, want %v", path, a, b))
		}
		return 0
	}
}
