//go:build browser && !(js && wasm)

package main

// End-to-end tests of the calculator page in headless chromium, against the
// static build (as `bellcheck static` writes it) served on 127.0.0.1 by a
// plain file server. Run them with `make test-browser`; they skip when
// BELLCHECK_CHROMIUM is not set. One browser serves every subtest; each
// subtest that needs a clean slate opens a tab in a browser context of its
// own (fresh storage and service workers).

import (
	"encoding/json"
	"fmt"
	"math"
	"net/http"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/chromedp/chromedp"

	"bellcheck/app/examples"
	"bellcheck/app/plot"
	"bellcheck/app/share"
	"bellcheck/engine"
	"bellcheck/engine/model"
)

// Window sizes of the screenshots.
const (
	wideW, wideH     = 1280, 800
	narrowW, narrowH = 390, 844
)

func TestBrowser(t *testing.T) {
	exe := chromiumPath(t)
	began := time.Now()
	dir := buildSite(t)
	srv := serveSite(t, dir, nil)
	b := startBrowser(t, exe, wideW, wideH)
	t.Logf("site built, server and chromium started in %s", time.Since(began).Round(time.Millisecond))

	t.Run("DefaultExample", func(t *testing.T) { testDefaultExample(t, b, srv) })
	t.Run("ModelError", func(t *testing.T) { testModelError(t, b, srv) })
	t.Run("Gallery", func(t *testing.T) { testGallery(t, b, srv) })
	t.Run("Permalink", func(t *testing.T) { testPermalink(t, b, srv) })
	t.Run("ParamControls", func(t *testing.T) { testParamControls(t, b, srv) })
	t.Run("Embed", func(t *testing.T) { testEmbed(t, b, srv) })
	t.Run("Export", func(t *testing.T) { testExport(t, b, srv) })
	t.Run("JSAPI", func(t *testing.T) { testJSAPI(t, b, srv) })
	t.Run("TypingDuring4D", func(t *testing.T) { testTyping(t, b, srv) })
	t.Run("Offline", func(t *testing.T) { testOffline(t, b, dir) })
	t.Logf("browser suite took %s", time.Since(began).Round(time.Millisecond))
}

// cliResult runs the command line (bellcheck fit --json) in-process on src
// and decodes its JSON.
func cliResult(t *testing.T, src string) cliJSON {
	t.Helper()
	file := filepath.Join(t.TempDir(), "model.txt")
	if err := os.WriteFile(file, []byte(src), 0o644); err != nil {
		t.Fatal(err)
	}
	code, stdout, stderr := runCLI(t, "", "fit", "--json", file)
	if code != exitOK {
		t.Fatalf("bellcheck fit --json: exit %d: %s", code, stderr)
	}
	var res cliJSON
	if err := json.Unmarshal([]byte(stdout), &res); err != nil {
		t.Fatalf("bellcheck fit --json: %v", err)
	}
	return res
}

// testDefaultExample: the page opens with the default example, and every
// number of its results table equals the command line's JSON for the same
// model to the precision printed.
func testDefaultExample(t *testing.T, b *browser, srv *siteServer) {
	ex, ok := examples.ByID(examples.Default)
	if !ok {
		t.Fatalf("no default example %q", examples.Default)
	}
	if len(ex.Params) > 0 {
		// The command line has no per-parameter options: the comparison
		// would be of different analyses.
		t.Fatalf("the default example sets parameter options %v; the command line cannot, so this comparison needs another model", ex.Params)
	}
	tb := b.newTab(t, true)
	tb.open(t, srv.URL+"/")
	if got := tb.editorText(t); got != ex.Source {
		t.Fatalf("the editor holds\n%s\nwant the default example %q", trimLines(got, 12), ex.ID)
	}
	tab := tb.table(t)
	if tab.Stale {
		t.Error("the table is dimmed although the result is current")
	}
	res := cliResult(t, ex.Source)
	problems, checked := compareTable(tab, res)
	for _, p := range problems {
		t.Error(p)
	}
	// Two parameters: per parameter 3 rows x 5 columns, give or take
	// absent fits; a correlation row; evidence and divergence rows.
	if checked < 40 {
		t.Errorf("only %d numbers compared; the table has sections %v", checked, titles(tab))
	}
	t.Logf("%d numbers of the table match the command line's JSON", checked)
	if errs := tb.consoleErrors(); len(errs) > 0 {
		t.Errorf("console errors: %v", errs)
	}
}

// editorErrorJS reads the editor's error display: the messages' positions,
// the gutter lines marked, and the text before the mark in the underlay.
const editorErrorJS = `(() => {
  const st = document.getElementById("bc-model-status");
  const mark = document.querySelector(".code-underlay mark.err-mark");
  let before = null;
  if (mark) {
    const r = document.createRange();
    r.setStart(mark.parentNode, 0);
    r.setEndBefore(mark);
    before = r.toString();
  }
  return {
    hasErrors: !!(st && st.classList.contains("has-errors")),
    positions: [...document.querySelectorAll("#bc-model-status .err-pos")].map((e) => e.textContent.trim()),
    messages: [...document.querySelectorAll("#bc-model-status .err-list li")].map((e) => e.textContent.trim()),
    gutter: [...document.querySelectorAll(".gutter .ln-err")].map((e) => e.textContent.trim()),
    marked: mark ? mark.textContent : null,
    before: before,
    invalid: document.getElementById("bc-model").getAttribute("aria-invalid"),
    stale: !!document.querySelector("table.results.stale"),
    status: (document.querySelector(".run-status") || {}).textContent || ""
  };
})()`

type editorError struct {
	HasErrors bool     `json:"hasErrors"`
	Positions []string `json:"positions"`
	Messages  []string `json:"messages"`
	Gutter    []string `json:"gutter"`
	Marked    *string  `json:"marked"`
	Before    *string  `json:"before"`
	Invalid   string   `json:"invalid"`
	Stale     bool     `json:"stale"`
	Status    string   `json:"status"`
}

// testModelError: a model with an unknown function shows the error at its
// line and column, keeps the last results dimmed, and a fix recomputes.
func testModelError(t *testing.T, b *browser, srv *siteServer) {
	tb := b.newTab(t, true)
	first := tb.open(t, srv.URL+"/")

	// "lgama" starts at line 2, column 10 (counted by hand: "-x^2/2 + "
	// is nine characters).
	broken := "a = 1\n-x^2/2 + lgama(x)\n"
	tb.editModel(t, broken)
	ctx, cancel := tb.within(10 * time.Second)
	_, err := chromedp.Run(ctx, chromedp.Poll[chromedp.Void](
		`document.querySelector("#bc-model-status.has-errors") !== null`, chromedp.WithPollingInterval(20*time.Millisecond)))
	cancel()
	if err != nil {
		t.Fatalf("no error shown for %q: %v", broken, err)
	}
	e := eval[editorError](t, tb, 5*time.Second, editorErrorJS)
	if len(e.Positions) == 0 || e.Positions[0] != "line 2, column 10:" {
		t.Errorf("error positions %q, want the first at \"line 2, column 10:\"", e.Positions)
	}
	if len(e.Messages) == 0 || !strings.Contains(e.Messages[0], "lgama") || !strings.Contains(e.Messages[0], "lgamma") {
		t.Errorf("error messages %q: want one naming lgama and suggesting lgamma", e.Messages)
	}
	if len(e.Gutter) != 1 || e.Gutter[0] != "2" {
		t.Errorf("gutter marks lines %q, want line 2", e.Gutter)
	}
	if e.Marked == nil || *e.Marked != "l" || e.Before == nil || *e.Before != "a = 1\n-x^2/2 + " {
		t.Errorf("underlay marks %v after %q, want \"l\" after %q", derefStr(e.Marked), derefStr(e.Before), "a = 1\n-x^2/2 + ")
	}
	if e.Invalid != "true" {
		t.Errorf("aria-invalid = %q, want true", e.Invalid)
	}
	if !e.Stale {
		t.Error("the last results are not dimmed while the model has errors")
	}
	if !strings.Contains(e.Status, "errors") {
		t.Errorf("run status %q does not say the model has errors", e.Status)
	}

	// The fix: -x^2/2 + x = -(x-1)^2/2 + 1/2, a normal with mean 1, sd 1
	// and log Z = 1/2 + log(sqrt(2 pi)) (closed form).
	tb.editModel(t, "a = 1\n-x^2/2 + a*x\n")
	tb.waitDone(t, first.Done, 30*time.Second)
	e = eval[editorError](t, tb, 5*time.Second, editorErrorJS)
	if e.HasErrors || e.Marked != nil || len(e.Gutter) > 0 || e.Stale {
		t.Errorf("after the fix: errors %v, mark %v, gutter %v, stale %v", e.Positions, derefStr(e.Marked), e.Gutter, e.Stale)
	}
	tab := tb.table(t)
	want := map[string]float64{"x/mean": 1, "x/sd": 1, "evidence and divergence/log-evidence": 0.5 + 0.5*math.Log(2*math.Pi)}
	found := 0
	for _, sec := range tab.Sections {
		for _, row := range sec.Rows {
			w, ok := want[sec.Title+"/"+row.Label]
			if !ok || len(row.Cells) == 0 {
				continue
			}
			found++
			got := parsePrinted(row.Cells[0].V)
			// Printed precision plus the quadrature's error (far below 1e-4
			// for a normal on the default grid).
			if len(got) != 1 || math.Abs(got[0].v-w) > got[0].half+1e-4 {
				t.Errorf("after the fix, exact %s/%s = %q, want %.5g", sec.Title, row.Label, row.Cells[0].V, w)
			}
		}
	}
	if found != len(want) {
		t.Errorf("after the fix the table has sections %v: found %d of the %d rows checked", titles(tab), found, len(want))
	}
	if errs := tb.consoleErrors(); len(errs) > 0 {
		t.Errorf("console errors: %v", errs)
	}
}

func derefStr(s *string) string {
	if s == nil {
		return "<none>"
	}
	return fmt.Sprintf("%q", *s)
}

// plotsJS inspects every drawn panel: the heat map's canvas pixels (share
// of painted pixels and distinct colours) and the SVG's stroked curves
// (count, colours, and that they have length and extent).
const plotsJS = `(() => {
  const out = [];
  for (const fs of document.querySelectorAll(".plots .fig-stack")) {
    const r = {id: fs.id, canvas: false, ink: 0, colours: 0, curves: 0, strokes: [], width: fs.getBoundingClientRect().width};
    const cv = fs.querySelector("canvas.heat");
    if (cv && cv.width > 0 && cv.height > 0) {
      r.canvas = true;
      const d = cv.getContext("2d").getImageData(0, 0, cv.width, cv.height).data;
      let ink = 0;
      const seen = new Set();
      for (let i = 0; i < d.length; i += 4) {
        if (d[i + 3] > 0) ink++;
        if (seen.size < 256) seen.add((d[i] << 16) | (d[i + 1] << 8) | d[i + 2]);
      }
      r.ink = ink / (d.length / 4);
      r.colours = seen.size;
    }
    const svg = fs.querySelector("svg");
    if (svg) {
      const cols = new Set();
      for (const p of svg.querySelectorAll("path[fill='none']")) {
        const bb = p.getBBox();
        if (p.getTotalLength() > 20 && (bb.width > 5 || bb.height > 5)) {
          r.curves++;
          cols.add((p.getAttribute("stroke") || "").toLowerCase());
        }
      }
      r.strokes = [...cols];
    }
    out.push(r);
  }
  return out;
})()`

type panelInk struct {
	ID      string   `json:"id"`
	Canvas  bool     `json:"canvas"`
	Ink     float64  `json:"ink"`
	Colours int      `json:"colours"`
	Curves  int      `json:"curves"`
	Strokes []string `json:"strokes"`
	Width   float64  `json:"width"`
}

// checkPlots checks that a d-parameter result's panels are drawn: 1-D one
// panel of curves; 2-D one panel with a painted heat map; 3-D and 4-D a
// pair grid with d marginals and d(d-1)/2 painted pair panels. It returns
// the problems.
func checkPlots(panels []panelInk, d int) []string {
	var problems []string
	exact := strings.ToLower(plot.StyleOf(plot.Exact).Colour)
	wantPanels, wantHeat := 1, 0
	switch {
	case d == 2:
		wantHeat = 1
	case d >= 3:
		wantPanels, wantHeat = d*(d+1)/2, d*(d-1)/2
	}
	if len(panels) != wantPanels {
		problems = append(problems, fmt.Sprintf("%d panels, want %d", len(panels), wantPanels))
	}
	heat, exactSeen := 0, false
	for _, p := range panels {
		if p.Width < 50 {
			problems = append(problems, fmt.Sprintf("panel %s is %.0f px wide", p.ID, p.Width))
		}
		if p.Curves == 0 {
			problems = append(problems, fmt.Sprintf("panel %s has no curve drawn", p.ID))
		}
		for _, s := range p.Strokes {
			exactSeen = exactSeen || s == exact
		}
		if p.Canvas {
			// A painted heat map covers its canvas with many shades.
			if p.Ink < 0.5 || p.Colours < 8 {
				problems = append(problems, fmt.Sprintf("panel %s: heat map blank (%.0f %% painted, %d colours)", p.ID, 100*p.Ink, p.Colours))
			} else {
				heat++
			}
		}
	}
	if heat != wantHeat {
		problems = append(problems, fmt.Sprintf("%d painted heat maps, want %d", heat, wantHeat))
	}
	if !exactSeen {
		problems = append(problems, "no curve in the exact density's colour "+exact)
	}
	return problems
}

// readyJS reports whether the page shows a current result (the results
// area's data-state is "ready") of the model whose parameters are given,
// with the editor holding src.
func readyJS(src string, params []string) string {
	p, _ := json.Marshal(params)
	return `(() => {
  const ta = document.getElementById("bc-model");
  if (!ta || ta.value !== ` + jsString(src) + `) return false;
  const out = document.getElementById("bc-output");
  const st = (document.querySelector(".run-status") || {}).textContent || "";
  if (!out) return false;
  if (out.dataset.state === "error") return "failed: " + st;
  if (out.dataset.state !== "ready") return false;
  const t = document.querySelector("table.results");
  if (!t || t.classList.contains("stale") || document.querySelector(".plots.stale")) return false;
  const secs = [...t.querySelectorAll("tbody tr.sec")].map((e) => e.textContent.trim());
  const want = ` + string(p) + `;
  return want.every((n, i) => secs[i] === n);
})()`
}

// testGallery: every example renders its results and plots with no console
// error; screenshots of each at 1280x800 and 390 px wide go to screenshots/.
func testGallery(t *testing.T, b *browser, srv *siteServer) {
	tb := b.newTab(t, true)
	tb.open(t, srv.URL+"/")
	n := eval[int](t, tb, 5*time.Second, `document.querySelectorAll("ul.gallery button.ex").length`)
	if n != len(examples.All) {
		t.Fatalf("the gallery shows %d examples, want %d", n, len(examples.All))
	}
	for k, ex := range examples.All {
		t.Run(ex.ID, func(t *testing.T) {
			m, err := model.Parse(ex.Source)
			if err != nil {
				t.Fatalf("example %s does not parse: %v", ex.ID, err)
			}
			var names []string
			for _, p := range m.Params {
				names = append(names, p.Name)
			}
			before := len(tb.consoleErrors())
			began := time.Now()
			eval[bool](t, tb, 5*time.Second, fmt.Sprintf(`(document.querySelectorAll("ul.gallery button.ex")[%d].click(), true)`, k))
			ctx, cancel := tb.within(120 * time.Second)
			v, err := chromedp.Run(ctx, chromedp.Poll[any](readyJS(ex.Source, names), chromedp.WithPollingInterval(30*time.Millisecond), chromedp.WithPollingTimeout(120*time.Second)))
			cancel()
			if err != nil {
				t.Fatalf("example %s: no current result: %v (status %q)", ex.ID, err, tb.state(t).Status)
			}
			if s, ok := v.(string); ok {
				t.Fatalf("example %s: %s", ex.ID, s)
			}
			took := time.Since(began)
			// The heat maps are painted after the page update: allow a
			// few frames.
			var problems []string
			for try := 0; try < 20; try++ {
				problems = checkPlots(eval[[]panelInk](t, tb, 10*time.Second, plotsJS), len(names))
				if len(problems) == 0 {
					break
				}
				time.Sleep(50 * time.Millisecond)
			}
			for _, p := range problems {
				t.Errorf("example %s: %s", ex.ID, p)
			}
			if errs := tb.consoleErrors()[before:]; len(errs) > 0 {
				t.Errorf("example %s: console errors: %v", ex.ID, errs)
			}
			t.Logf("%s (%d-D) shown in %s", ex.ID, len(names), took.Round(time.Millisecond))
			tb.do(t, 10*time.Second, chromedp.Evaluate[chromedp.Void](`window.scrollTo(0, 0)`))
			tb.screenshot(t, ex.ID+"-1280x800.png", false)
			tb.screenshot(t, ex.ID+"-1280-full.png", true)
			tb.do(t, 10*time.Second, chromedp.EmulateViewport(narrowW, narrowH))
			waitFrames(t, tb)
			tb.screenshot(t, ex.ID+"-390-full.png", true)
			tb.do(t, 10*time.Second, chromedp.EmulateViewport(wideW, wideH))
			waitFrames(t, tb)
		})
	}
}

// waitFrames lets the page lay out and paint twice.
func waitFrames(t *testing.T, tb *tab) {
	eval[bool](t, tb, 5*time.Second, `new Promise((r) => requestAnimationFrame(() => requestAnimationFrame(() => r(true))))`)
}

// linkStateJS reads what a link should restore: the editor's text, each
// parameter's scale and grid points, and the log-density toggle.
const linkStateJS = `(() => {
  const params = [];
  for (let i = 0; document.getElementById("bc-p" + i + "-scale"); i++) {
    params.push({scale: document.getElementById("bc-p" + i + "-scale").value,
      points: document.getElementById("bc-p" + i + "-points").value});
  }
  const log = document.getElementById("bc-log");
  return {text: document.getElementById("bc-model").value, params, log: log ? log.checked : null,
    href: location.href, facts: (document.querySelector(".facts") || {}).textContent || ""};
})()`

type linkState struct {
	Text   string `json:"text"`
	Params []struct {
		Scale  string `json:"scale"`
		Points string `json:"points"`
	} `json:"params"`
	Log   *bool  `json:"log"`
	Href  string `json:"href"`
	Facts string `json:"facts"`
}

// testPermalink: a link made outside the page (share.Encode, as another
// tool would) opens to its model, options and view; the page then keeps its
// state in the URL, and that link, opened in a fresh browser (no saved
// work), restores the same text, options, view and results.
func testPermalink(t *testing.T, b *browser, srv *siteServer) {
	ex, ok := examples.ByID("decay")
	if !ok {
		t.Fatal("no decay example")
	}
	made, err := share.Encode(share.State{Model: ex.Source, Params: []engine.ParamOptions{{Scale: engine.Log, Points: 301}}})
	if err != nil {
		t.Fatal(err)
	}
	a := b.newTab(t, true)
	a.open(t, srv.URL+"/#"+made)
	opened := eval[linkState](t, a, 5*time.Second, linkStateJS)
	if opened.Text != ex.Source || len(opened.Params) != 1 || opened.Params[0].Scale != "log" || opened.Params[0].Points != "301" {
		t.Errorf("a made link opened to %+v, want the decay model with the log scale and 301 points", opened)
	}
	if !strings.Contains(opened.Facts, "301 points on the log scale") {
		t.Errorf("the grid facts %q do not show the 301 points on the log scale the link asks for", opened.Facts)
	}
	// The log-density view, then the page's own link.
	eval[bool](t, a, 5*time.Second, `(document.getElementById("bc-log").click(), true)`)
	waitFrames(t, a)
	time.Sleep(200 * time.Millisecond)
	want := eval[linkState](t, a, 5*time.Second, linkStateJS)
	wantTable := a.table(t)
	if want.Log == nil || !*want.Log {
		t.Fatalf("the log-density toggle did not take: %+v", want)
	}
	_, frag, found := strings.Cut(want.Href, "#")
	if !found {
		t.Fatalf("the page's URL %q holds no state", want.Href)
	}
	link, err := share.Decode(frag)
	if err != nil {
		t.Fatalf("the page's link does not decode: %v", err)
	}
	if link.Model != ex.Source || len(link.Params) != 1 || link.Params[0].Scale != engine.Log || link.Params[0].Points != 301 || !link.View.LogScale {
		t.Errorf("the page's link holds %+v, want the decay model with the log scale, 301 points and the log view", link)
	}

	c := b.newTab(t, true)
	c.open(t, want.Href)
	got := eval[linkState](t, c, 5*time.Second, linkStateJS)
	if got.Text != want.Text {
		t.Errorf("the link restored the text\n%s\nwant\n%s", trimLines(got.Text, 10), trimLines(want.Text, 10))
	}
	if fmt.Sprint(got.Params) != fmt.Sprint(want.Params) || got.Log == nil || *got.Log != *want.Log {
		t.Errorf("the link restored options %+v and log view %v, want %+v and %v", got.Params, deref2(got.Log), want.Params, *want.Log)
	}
	if gotTable := c.table(t); fmt.Sprint(gotTable) != fmt.Sprint(wantTable) {
		t.Errorf("the link's results differ:\n%v\nwant\n%v", gotTable, wantTable)
	}
	for _, tt := range []*tab{a, c} {
		if errs := tt.consoleErrors(); len(errs) > 0 {
			t.Errorf("console errors: %v", errs)
		}
	}
}

// testParamControls: after the gallery replaces the model, the parameter
// panel's controls act on the new model's parameters (the page keeps
// options by parameter name).
func testParamControls(t *testing.T, b *browser, srv *siteServer) {
	a := b.newTab(t, true)
	first := a.open(t, srv.URL+"/") // the default example: parameters a and b
	ex, _ := examples.ByID("decay")
	eval[bool](t, a, 5*time.Second, fmt.Sprintf(`(document.querySelectorAll("ul.gallery button.ex")[%d].click(), true)`, exampleIndex(t, ex.ID)))
	st := a.waitDone(t, first.Done, 60*time.Second)
	eval[bool](t, a, 5*time.Second, `(() => { const e = document.getElementById("bc-p0-points"); e.value = "301";
	  e.dispatchEvent(new Event("change", {bubbles: true})); return true; })()`)
	a.waitDone(t, st.Done, 60*time.Second)
	got := eval[linkState](t, a, 5*time.Second, linkStateJS)
	if !strings.Contains(got.Facts, "rate ∈") || !strings.Contains(got.Facts, "301 points") {
		t.Errorf("after loading the decay example and asking for 301 grid points for its rate, the grid facts say %q", got.Facts)
	}
	if _, frag, ok := strings.Cut(got.Href, "#"); ok {
		if link, err := share.Decode(frag); err != nil || len(link.Params) != 1 || link.Params[0].Points != 301 {
			t.Errorf("the page's link holds options %+v (error %v), want 301 points for rate", link.Params, err)
		}
	}
}

func deref2(b *bool) string {
	if b == nil {
		return "<none>"
	}
	return fmt.Sprint(*b)
}

// webHasFile reports whether web/ holds a file matching the glob.
func webHasFile(glob string) bool {
	m, _ := filepath.Glob(filepath.Join("..", "web", glob))
	return len(m) > 0
}

// serverDown reports whether url refuses connections.
func serverDown(url string) bool {
	c := http.Client{Timeout: 2 * time.Second}
	resp, err := c.Get(url)
	if err == nil {
		resp.Body.Close()
	}
	return err != nil
}

// TestBrowserPlotCheck checks checkPlots itself (no browser needed): a
// blank heat map, a panel without curves and a missing panel are caught.
func TestBrowserPlotCheck(t *testing.T) {
	exact := strings.ToLower(plot.StyleOf(plot.Exact).Colour)
	good := panelInk{ID: "p", Canvas: true, Ink: 1, Colours: 200, Curves: 6, Strokes: []string{exact}, Width: 400}
	if p := checkPlots([]panelInk{good}, 2); len(p) != 0 {
		t.Errorf("a drawn 2-D panel: %v", p)
	}
	blank := good
	blank.Ink, blank.Colours = 0, 1
	noCurves := good
	noCurves.Curves, noCurves.Strokes = 0, nil
	for name, c := range map[string]struct {
		panels []panelInk
		d      int
	}{
		"blank heat map": {[]panelInk{blank}, 2},
		"no curves":      {[]panelInk{noCurves}, 2},
		"no panel":       {nil, 1},
		"3-D with one":   {[]panelInk{good}, 3},
	} {
		if p := checkPlots(c.panels, c.d); len(p) == 0 {
			t.Errorf("%s: not caught", name)
		}
	}
}
