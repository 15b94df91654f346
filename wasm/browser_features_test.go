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
	time.Sleep(500 * time.Millisecond) // later messages (a resize after the results)
	msgs := eval[[]postedMessage](t, tb, 5*time.Second, `window.__msgs`)
	frameHeight := eval[float64](t, tb, 5*time.Second,
		`(() => { try { return document.getElementById("calc").contentDocument.documentElement.scrollHeight; } catch (e) { return -1; } })()`)
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
	// The frame is cross-origin to the host, so its height is read as -1
	// there; when it can be read it must match.
	if frameHeight > 0 && (last < 0.8*frameHeight || last > 1.2*frameHeight) {
		t.Errorf("posted height %v px, the frame's document is %v px", last, frameHeight)
	}
	t.Logf("%d messages; last height %v px", len(msgs), last)
}

// heightOf reads a posted height: a number, or an object whose only number
// is a height (with at most a type tag beside it).
func heightOf(v any) (float64, bool) {
	switch x := v.(type) {
	case float64:
		return x, true
	case map[string]any:
		var h float64
		found := false
		for k, val := range x {
			switch n := val.(type) {
			case float64:
				if found || !strings.Contains(strings.ToLower(k), "height") {
					return 0, false
				}
				h, found = n, true
			case string:
				// a tag naming the message is fine
			default:
				return 0, false
			}
		}
		return h, found
	}
	return 0, false
}

// exportSelector finds the page's export controls: each carries
// data-export naming its format (json, csv, svg, png). Controls that copy
// to the clipboard (Markdown, LaTeX) are not downloads and are not clicked.
const exportSelector = `[data-export]`

// testExport: each export control downloads a file that is valid in its
// format.
func testExport(t *testing.T, b *browser, srv *siteServer) {
	tb := b.newTab(t, true)
	tb.open(t, srv.URL+"/")
	formats := eval[[]string](t, tb, 5*time.Second,
		`[...document.querySelectorAll(`+jsString(exportSelector)+`)].map((e) => e.getAttribute("data-export"))`)
	if len(formats) == 0 {
		t.Skipf("the page has no export controls yet (looked for %s): nothing to test", exportSelector)
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
	for i, f := range formats {
		switch f {
		case "json", "csv", "svg", "png":
		default:
			continue
		}
		n := len(listFiles(dl))
		eval[bool](t, tb, 5*time.Second, fmt.Sprintf(`(document.querySelectorAll(%s)[%d].click(), true)`, jsString(exportSelector), i))
		file := waitNewFile(t, dl, n, 15*time.Second)
		data, err := os.ReadFile(file)
		if err != nil {
			t.Fatal(err)
		}
		if err := validExport(f, data); err != nil {
			t.Errorf("export %d (%s): %v", i, f, err)
		}
	}
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

func waitNewFile(t *testing.T, dir string, had int, d time.Duration) string {
	deadline := time.Now().Add(d)
	for time.Now().Before(deadline) {
		if files := listFiles(dir); len(files) > had {
			newest, newestT := "", time.Time{}
			for _, f := range files {
				if st, err := os.Stat(f); err == nil && st.ModTime().After(newestT) {
					newest, newestT = f, st.ModTime()
				}
			}
			return newest
		}
		time.Sleep(50 * time.Millisecond)
	}
	t.Fatalf("no download in %s", d)
	return ""
}

// validExport checks a downloaded file: JSON with the command line's
// fields, CSV with rows of one width, SVG that is well-formed XML with an
// svg root, PNG that decodes.
func validExport(format string, data []byte) error {
	switch format {
	case "json":
		var r cliJSON
		if err := json.Unmarshal(data, &r); err != nil {
			return err
		}
		if len(r.Params) == 0 || r.Exact.LogZ == nil {
			return fmt.Errorf("JSON without params or exact.log_z")
		}
	case "csv":
		recs, err := csv.NewReader(bytes.NewReader(data)).ReadAll()
		if err != nil {
			return err
		}
		if len(recs) < 2 {
			return fmt.Errorf("%d CSV records", len(recs))
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
