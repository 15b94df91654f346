//go:build browser && !(js && wasm)

package main

// Browser tests of the practitioner's workflow: pasted columns and a
// dropped CSV file as the model's data, a model's own setting lines, a
// candidate Gaussian scored beside the fits.

import (
	"bytes"
	"encoding/json"
	"fmt"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	cdpbrowser "github.com/chromedp/cdproto/browser"
	"github.com/chromedp/chromedp"

	"bellcheck/app/share"
	"bellcheck/app/ui"
)

// TestBrowserWorkflow runs the workflow tests in one browser.
func TestBrowserWorkflow(t *testing.T) {
	exe := chromiumPath(t)
	dir := buildSite(t)
	srv := serveSite(t, dir, nil)
	b := startBrowser(t, exe, wideW, wideH)
	t.Run("PasteColumns", func(t *testing.T) { testPasteColumns(t, b, srv) })
	t.Run("DropCSV", func(t *testing.T) { testDropCSV(t, b, srv) })
	t.Run("BigDataKept", func(t *testing.T) { testBigDataKept(t, b, srv) })
	t.Run("Candidate", func(t *testing.T) { testCandidate(t, b, srv) })
	t.Run("CandidateReach", func(t *testing.T) { testCandidateReach(t, b, srv) })
	t.Run("Slider", func(t *testing.T) { testSlider(t, b, srv) })
	t.Run("PlotOnlyEmbed", func(t *testing.T) { testPlotOnlyEmbed(t, b, srv) })
	t.Run("GridFields", func(t *testing.T) { testGridFields(t, b, srv) })
	t.Run("FitUnconstrained", func(t *testing.T) { testFitUnconstrained(t, b, srv) })
}

// normalModel uses a data column y: a normal with unknown mean and sd.
const normalModel = "param m\nparam s in [0, inf]\nsum(ld_normal(y, m, s)) + ld_normal(m, 0, 10) + ld_gamma(s, 2, 1)\n"

// pasteData puts text into the data panel's paste field as a paste would
// (an input event).
func pasteData(t *testing.T, tb *tab, text string) {
	t.Helper()
	eval[bool](t, tb, 10*time.Second, `(() => { const el = document.getElementById("bc-data-paste");
  el.value = `+jsString(text)+`; el.dispatchEvent(new Event("input", {bubbles: true})); return true; })()`)
}

// dataPanelText is the data panel's text.
func dataPanelText(t *testing.T, tb *tab) string {
	return eval[string](t, tb, 5*time.Second, `(document.querySelector(".data-panel") || {textContent: ""}).textContent`)
}

// waitFor polls a JavaScript condition.
func waitFor(t *testing.T, tb *tab, d time.Duration, what, expr string) {
	t.Helper()
	ctx, cancel := tb.within(d)
	defer cancel()
	if _, err := chromedp.Run(ctx, chromedp.Poll[chromedp.Void](expr, chromedp.WithPollingInterval(30*time.Millisecond), chromedp.WithPollingTimeout(d))); err != nil {
		t.Fatalf("waiting for %s: %v (console errors %v)", what, err, tb.consoleErrors())
	}
}

// testPasteColumns: tab-separated columns pasted with a header become the
// model's vectors, and the page's table matches the command line given the
// same columns as a --data file; a bad cell is an error that names its
// place, and the attached data stays.
func testPasteColumns(t *testing.T, b *browser, srv *siteServer) {
	tb := b.newTab(t, true)
	defer tb.close()
	tb.open(t, srv.URL+"/")
	done := tb.state(t).Done
	tb.editModel(t, normalModel)
	paste := "y\tz\n4.1\t1\n5.3\t2\n3.8\t3\n6.0\t4\n4.9\t5\n5.5\t6\n"
	pasteData(t, tb, paste)
	tb.waitDone(t, done, 90*time.Second)
	waitFor(t, tb, 20*time.Second, "the current table", `(() => { const t = document.querySelector("table.results"); return t && !t.classList.contains("stale") && !document.querySelector(".plots.stale"); })()`)
	if txt := dataPanelText(t, tb); !strings.Contains(txt, "pasted columns") || !strings.Contains(txt, "6 values") {
		t.Fatalf("the data panel says %q, want the pasted columns with 6 values", txt)
	}
	file := filepath.Join(t.TempDir(), "y.tsv")
	if err := os.WriteFile(file, []byte(paste), 0o644); err != nil {
		t.Fatal(err)
	}
	model := filepath.Join(t.TempDir(), "model.txt")
	if err := os.WriteFile(model, []byte(normalModel), 0o644); err != nil {
		t.Fatal(err)
	}
	code, stdout, stderr := runCLI(t, "", "fit", "--json", "--data", file, model)
	if code != exitOK {
		t.Fatalf("bellcheck fit --data: exit %d: %s", code, stderr)
	}
	var res cliJSON
	if err := json.Unmarshal([]byte(stdout), &res); err != nil {
		t.Fatal(err)
	}
	problems, checked := compareTable(tb.table(t), res)
	for _, p := range problems {
		t.Errorf("page vs command line with the same data: %s", p)
	}
	if checked < 10 {
		t.Errorf("only %d numbers compared", checked)
	}
	tb.do(t, 10*time.Second, chromedp.Evaluate[chromedp.Void](`window.scrollTo(0, 0)`))
	tb.screenshot(t, "workflow-data-1280x800.png", false)

	pasteData(t, tb, "y\n4.1\nNA\n")
	waitFor(t, tb, 10*time.Second, "the paste's error", `!!document.querySelector(".data-error")`)
	msg := eval[string](t, tb, 5*time.Second, `document.querySelector(".data-error").textContent`)
	if !strings.Contains(msg, "3:1") || !strings.Contains(msg, "NA") {
		t.Errorf("the error for a NA cell says %q, want its place 3:1 and the cell", msg)
	}
	if txt := dataPanelText(t, tb); !strings.Contains(txt, "6 values") {
		t.Errorf("a bad paste dropped the attached data: %q", txt)
	}
	// The link carries the data: a fresh tab opened on it shows it.
	link := eval[string](t, tb, 5*time.Second, `location.href`)
	tb2 := b.newTab(t, true)
	defer tb2.close()
	tb2.open(t, link)
	if txt := dataPanelText(t, tb2); !strings.Contains(txt, "6 values") {
		t.Errorf("the link opened without its data: %q", txt)
	}
}

// testDropCSV: a CSV file dropped on the page (a synthetic drop event with a
// File) is attached and analysed.
func testDropCSV(t *testing.T, b *browser, srv *siteServer) {
	tb := b.newTab(t, true)
	defer tb.close()
	tb.open(t, srv.URL+"/")
	done := tb.state(t).Done
	tb.editModel(t, normalModel)
	tb.waitDone(t, done, 90*time.Second) // y is read as a parameter until data comes
	done = tb.state(t).Done
	csv := "y,w\n2.5,1\n3.5,1\n3,1\n2.8,\n"
	eval[bool](t, tb, 10*time.Second, fmt.Sprintf(`(() => {
  const dt = new DataTransfer();
  dt.items.add(new File([%s], "weights.csv", {type: "text/csv"}));
  const ev = new DragEvent("drop", {dataTransfer: dt, bubbles: true, cancelable: true});
  document.getElementById("bc-model").dispatchEvent(ev);
  return ev.defaultPrevented; })()`, jsString(csv)))
	waitFor(t, tb, 20*time.Second, "the dropped file", `(document.querySelector(".data-panel") || {textContent: ""}).textContent.includes("weights.csv")`)
	tb.waitDone(t, done, 90*time.Second)
	if txt := dataPanelText(t, tb); !strings.Contains(txt, "4 values") || !strings.Contains(txt, "3 values") {
		t.Errorf("the data panel says %q, want y with 4 values and w with 3", txt)
	}
	if n := eval[int](t, tb, 5*time.Second, `document.querySelectorAll("table.results tr.sec").length`); n < 2 {
		t.Errorf("%d parameter sections, want m and s (y is data)", n)
	}
	if got := tb.editorText(t); got != normalModel {
		t.Errorf("the drop changed the model text to %q", got)
	}
}

// testCandidate: a model's #@ gaussian line is scored like the fits and
// drawn in its own style; the curvatures are shown with their sentence.
func testCandidate(t *testing.T, b *browser, srv *siteServer) {
	tb := b.newTab(t, true)
	defer tb.close()
	tb.open(t, srv.URL+"/")
	done := tb.state(t).Done
	src := "#@ gaussian mine mean.a=0.5 mean.b=-0.2 sd.a=0.6 sd.b=0.9 corr.a.b=0.3\n#@ points a=121\nparam a\nparam b\n-(a^2)/2 - (b - a^2/3)^2/2 - a^4/12\n"
	tb.editModel(t, src)
	tb.waitDone(t, done, 90*time.Second)
	waitFor(t, tb, 20*time.Second, "the candidate's column", `!!document.querySelector("table.results th.cand-col")`)
	head := eval[string](t, tb, 5*time.Second, `document.querySelector("table.results th.cand-col").textContent`)
	if !strings.Contains(head, "mine") {
		t.Errorf("the candidate's column head says %q", head)
	}
	// One candidate cell in every row of the results table, beside the fits.
	// (The first table.results is the results table; the curvature card's
	// matrices share its look.)
	rows := eval[int](t, tb, 5*time.Second, `document.querySelector("table.results").querySelectorAll("tbody tr:not(.sec)").length`)
	cands := eval[int](t, tb, 5*time.Second, `document.querySelector("table.results").querySelectorAll("tbody tr:not(.sec) td.cand").length`)
	if rows == 0 || cands != rows {
		t.Errorf("%d candidate cells in %d rows of the results table", cands, rows)
	}
	kl := eval[string](t, tb, 5*time.Second, `(() => { for (const tr of document.querySelectorAll("table.results tbody tr")) {
  const th = tr.querySelector("th.rlabel"); if (th && th.textContent === "KL(q‖p)") return tr.querySelector("td.cand").textContent; } return ""; })()`)
	if kl == "" || kl == "—" {
		t.Errorf("the candidate's KL(q‖p) cell is %q", kl)
	}
	strokes := eval[int](t, tb, 5*time.Second, `document.querySelectorAll('#bc-output svg path[stroke="#c0143c"]').length`)
	if strokes < 3 {
		t.Errorf("%d candidate strokes in the plots, want its contours and edge marginals", strokes)
	}
	legend := eval[string](t, tb, 5*time.Second, `document.querySelector(".legend").textContent`)
	if !strings.Contains(legend, "mine") {
		t.Errorf("the legend %q does not name the candidate", legend)
	}
	// The points line applied: the grid fact says 121 points for a.
	grid := eval[string](t, tb, 5*time.Second, `document.querySelector(".modes-grid .facts").textContent`)
	if !strings.Contains(grid, "121 points") {
		t.Errorf("the grid %q does not use the file's #@ points a=121", grid)
	}
	if s := eval[string](t, tb, 5*time.Second, `(document.getElementById("bc-curv-summary") || {textContent: ""}).textContent`); s == "" {
		t.Error("no curvature sentence")
	}
	// Exported for a paper: the SVG has the axis titles, a legend naming
	// the candidate, and the caption; the PNG is drawn from it.
	dl := t.TempDir()
	ctx, cancel := tb.within(10 * time.Second)
	_, err := chromedp.CallBrowser(ctx, cdpbrowser.SetDownloadBehavior, cdpbrowser.SetDownloadBehaviorParams{
		Behavior: cdpbrowser.SetDownloadBehaviorBehaviorAllowAndName, DownloadPath: dl, BrowserContextID: chromedp.FromContext(tb.ctx).BrowserContextID,
	})
	cancel()
	if err != nil {
		t.Fatalf("allowing downloads: %v", err)
	}
	for _, id := range []string{"bc-export-svg", "bc-export-png"} {
		n := len(listFiles(dl))
		if !eval[bool](t, tb, 5*time.Second, `(() => { const b = document.getElementById(`+jsString(id)+`); if (!b || b.disabled) return false; b.click(); return true; })()`) {
			t.Fatalf("no enabled #%s", id)
		}
		file := waitNewFile(t, dl, n, 20*time.Second)
		if file == "" {
			t.Fatalf("%s: nothing downloaded", id)
		}
		data, err := os.ReadFile(file)
		if err != nil {
			t.Fatal(err)
		}
		_ = os.MkdirAll(filepath.Join("..", "screenshots"), 0o755)
		_ = os.WriteFile(filepath.Join("..", "screenshots", "workflow-export-"+strings.TrimPrefix(id, "bc-export-")), data, 0o644)
		if id == "bc-export-png" {
			img, err := png.Decode(bytes.NewReader(data))
			if err != nil || img.Bounds().Dx() < 2*(480+170)-2 {
				t.Errorf("PNG: %v, bounds %v, want the figure with its legend at twice the size", err, img.Bounds())
			}
			continue
		}
		if err := validExport("svg", data, cliJSON{}); err != nil {
			t.Errorf("SVG: %v", err)
		}
		for _, want := range []string{"mine (yours)", "Joint density of a and b", "Laplace", ">a<", ">b<", `stroke="#c0143c"`} {
			if !strings.Contains(string(data), want) {
				t.Errorf("the exported SVG lacks %q", want)
			}
		}
	}
	tb.do(t, 10*time.Second, chromedp.Evaluate[chromedp.Void](`window.scrollTo(0, 0)`))
	tb.screenshot(t, "workflow-candidate-1280-full.png", true)
	tb.do(t, 10*time.Second, chromedp.EmulateViewport(narrowW, narrowH))
	time.Sleep(300 * time.Millisecond)
	tb.screenshot(t, "workflow-candidate-390-full.png", true)
	// The results table's row labels stay in view when it scrolls sideways.
	if !eval[bool](t, tb, 5*time.Second, `(() => { const s = document.querySelector("table.results").closest(".table-scroll"); return s.scrollWidth > s.clientWidth + 50; })()`) {
		t.Fatal("at 390 px the results table does not scroll sideways: the sticky check would prove nothing")
	}
	left := eval[float64](t, tb, 5*time.Second, `(() => { const s = document.querySelector("table.results").closest(".table-scroll");
  s.scrollLeft = 400; const th = document.querySelector("table.results tbody th.rlabel");
  return th.getBoundingClientRect().left - s.getBoundingClientRect().left; })()`)
	if left < -1 || left > 2 {
		t.Errorf("after scrolling the table sideways its row label is %.1f px from the left edge, want 0 (sticky)", left)
	}
	eval[bool](t, tb, 5*time.Second, `(document.querySelector("table.results").scrollIntoView(), true)`)
	tb.screenshot(t, "workflow-table-scrolled-390.png", false)
}

// axisText is the tick labels of the main plot, in order.
const axisTextJS = `[...document.querySelectorAll("#bc-output .fig-stack svg text")].map((e) => e.textContent).join("|")`

// testSlider: a constant marked with #@ vary is a slider; a drag (a burst
// of input events) analyses again with the newest value, and with the axes
// held the plot's tick labels stay as they were; a pinned result stays
// drawn beneath.
func testSlider(t *testing.T, b *browser, srv *siteServer) {
	tb := b.newTab(t, true)
	defer tb.close()
	tb.open(t, srv.URL+"/")
	done := tb.state(t).Done
	tb.editModel(t, "#@ vary k=1:8\nparam x in [0, inf]\nk = 2\nld_gamma(x, k, 1)\n")
	tb.waitDone(t, done, 90*time.Second)
	waitFor(t, tb, 20*time.Second, "the slider", `!!document.getElementById("bc-live-0")`)
	eval[bool](t, tb, 5*time.Second, `(document.getElementById("bc-hold").click(), true)`)
	waitFor(t, tb, 5*time.Second, "the hold toggle", `document.getElementById("bc-hold").checked`)
	eval[bool](t, tb, 5*time.Second, `(document.getElementById("bc-pin").click(), true)`)
	waitFor(t, tb, 5*time.Second, "the pinned outline", `document.querySelectorAll("#bc-output svg path.pinned").length > 0`)
	before := eval[string](t, tb, 5*time.Second, axisTextJS)
	mean0 := eval[string](t, tb, 5*time.Second, `document.querySelector("table.results tbody tr:not(.sec) td").textContent`)
	done = tb.state(t).Done
	// A drag: many values in quick succession; only the last must count.
	eval[bool](t, tb, 5*time.Second, `(() => { const el = document.getElementById("bc-live-0");
  for (const v of [2.5, 3, 3.5, 4, 4.5, 5]) { el.value = String(v); el.dispatchEvent(new Event("input", {bubbles: true})); }
  return true; })()`)
	tb.waitDone(t, done, 90*time.Second)
	t.Logf("after the drag: %s", eval[string](t, tb, 5*time.Second, `JSON.stringify({v: document.getElementById("bc-live-0").value, shown: document.getElementById("bc-live-0-value").textContent, stale: document.querySelector("table.results").className, status: document.querySelector(".run-status").textContent})`))
	waitFor(t, tb, 20*time.Second, "the result for k = 5", `parseFloat(document.getElementById("bc-live-0-value").textContent) === 5 &&
  !document.querySelector("table.results").classList.contains("stale")`)
	mean1 := eval[string](t, tb, 5*time.Second, `document.querySelector("table.results tbody tr:not(.sec) td").textContent`)
	// Gamma(shape k, rate 1) has mean k (closed form): 5 after the drag.
	if m := strings.TrimSpace(mean1); !strings.HasPrefix(m, "5.00") && !strings.HasPrefix(m, "4.99") {
		t.Errorf("exact mean after the drag to k = 5 is %q (before %q), want 5", mean1, mean0)
	}
	if n := eval[int](t, tb, 5*time.Second, `document.querySelectorAll("#bc-output svg path.pinned").length`); n == 0 {
		t.Error("the pinned result is not drawn under the new one")
	}
	after := eval[string](t, tb, 5*time.Second, axisTextJS)
	if before != after {
		t.Errorf("with the axes held the tick labels changed:\n%s\n%s", before, after)
	}
	tb.do(t, 10*time.Second, chromedp.Evaluate[chromedp.Void](`window.scrollTo(0, 0)`))
	tb.screenshot(t, "workflow-slider-1280x800.png", false)

	// The link in the address bar keeps the slider's value (once the
	// sliding pauses), and opens at it in another browser.
	var hash string
	for end := time.Now().Add(20 * time.Second); time.Now().Before(end); time.Sleep(100 * time.Millisecond) {
		hash = eval[string](t, tb, 5*time.Second, `location.hash`)
		if st, err := share.Decode(hash); err == nil && st.Constants["k"] == 5 {
			break
		}
		hash = ""
	}
	if hash == "" {
		t.Fatalf("the address bar's link never held k = 5 (it holds %q)", eval[string](t, tb, 5*time.Second, `location.hash`))
	}
	other := b.newTab(t, true)
	defer other.close()
	other.open(t, srv.URL+"/"+hash)
	waitFor(t, other, 30*time.Second, "the slider at k = 5", `(() => { const s = document.getElementById("bc-live-0"); const v = document.getElementById("bc-live-0-value");
  return s && v && parseFloat(s.value) === 5 && parseFloat(v.textContent) === 5; })()`)
	waitFor(t, other, 60*time.Second, "the result for k = 5", `(() => { const t = document.querySelector("table.results");
  return t && !t.classList.contains("stale") && document.getElementById("bc-output").dataset.state === "ready"; })()`)
	// Gamma(shape 5, rate 1) has mean 5 (closed form).
	if m := strings.TrimSpace(eval[string](t, other, 5*time.Second, `document.querySelector("table.results tbody tr:not(.sec) td").textContent`)); !strings.HasPrefix(m, "5.00") && !strings.HasPrefix(m, "4.99") {
		t.Errorf("the link opens with the exact mean %q, want 5 (k = 5)", m)
	}
}

// testPlotOnlyEmbed: an embed link with the plots-only layout and a height
// cap shows the plots and nothing of the editor, the table or the
// diagnostics, within the cap.
func testPlotOnlyEmbed(t *testing.T, b *browser, srv *siteServer) {
	frag, err := share.Encode(share.State{Model: "param a\nparam b\n-(a^2)/2 - (b - a^2/3)^2/2\n",
		View: share.View{Embed: true, PlotOnly: true, MaxHeight: 420}})
	if err != nil {
		t.Fatal(err)
	}
	tb := b.newTab(t, true)
	defer tb.close()
	tb.open(t, srv.URL+"/#"+frag)
	waitFor(t, tb, 20*time.Second, "the plot", `document.querySelectorAll("#bc-output svg").length > 0`)
	for _, sel := range []string{"table.results", "#bc-model", ".diag", ".data-panel"} {
		if n := eval[int](t, tb, 5*time.Second, `document.querySelectorAll(`+jsString(sel)+`).length`); n != 0 {
			t.Errorf("the plots-only embed shows %d %s", n, sel)
		}
	}
	h := eval[float64](t, tb, 5*time.Second, `document.getElementById("bc-root").getBoundingClientRect().height`)
	if h > 420.5 {
		t.Errorf("the embed is %.0f px high, above its cap of 420", h)
	}
	if n := eval[int](t, tb, 5*time.Second, `document.querySelectorAll("#open-full, .open-full").length`); n == 0 {
		t.Error("no link to the full calculator")
	}
	tb.screenshot(t, "workflow-plot-only-embed.png", false)
}

// setField types a value into an input and commits it (a change event).
func setField(t *testing.T, tb *tab, id, v string) {
	t.Helper()
	eval[bool](t, tb, 5*time.Second, `(() => { const el = document.getElementById(`+jsString(id)+`);
  el.value = `+jsString(v)+`; el.dispatchEvent(new Event("change", {bubbles: true})); return true; })()`)
}

// testGridFields: the grid-range fields never hold a value the analysis
// does not use: a box whose start is above its end is cleared, and a value
// typed for one model's parameter is gone when another model's parameter
// takes its place.
func testGridFields(t *testing.T, b *browser, srv *siteServer) {
	tb := b.newTab(t, true)
	defer tb.close()
	tb.open(t, srv.URL+"/")
	done := tb.state(t).Done
	tb.editModel(t, "param m\n-m^2/2\n")
	tb.waitDone(t, done, 90*time.Second)
	setField(t, tb, "bc-p0-lo", "5")
	setField(t, tb, "bc-p0-hi", "3")
	waitFor(t, tb, 20*time.Second, "the fields cleared", `document.getElementById("bc-p0-lo").value === "" && document.getElementById("bc-p0-hi").value === ""`)
	// The cleared fields may start an analysis of their own: the result
	// to wait for is the one that shows the new side, whenever it lands.
	setField(t, tb, "bc-p0-lo", "-2")
	waitFor(t, tb, 90*time.Second, "the grid with lower side -2",
		`(() => { const f = document.querySelector(".modes-grid .facts"); return !!f && (f.textContent.includes("m ∈ [−2") || f.textContent.includes("m ∈ [-2")); })()`)
	// The user types into the field without committing, then the model
	// changes to another parameter: the field is cleared.
	eval[bool](t, tb, 5*time.Second, `(document.getElementById("bc-p0-hi").value = "7", true)`)
	done = tb.state(t).Done
	tb.editModel(t, "param x\n-x^2/2\n")
	tb.waitDone(t, done, 90*time.Second)
	waitFor(t, tb, 10*time.Second, "the fields of x blank", `document.getElementById("bc-p0-lo").value === "" && document.getElementById("bc-p0-hi").value === ""`)
}

// testCandidateReach: a candidate whose contours lie beyond the exact
// posterior's plot grid widens the 2-D view so that its contours are drawn
// whole inside the plot area (the grid of this model reaches a = 7.0; the
// candidate's outer contour a = 12.0, from the command line's JSON).
func testCandidateReach(t *testing.T, b *browser, srv *siteServer) {
	tb := b.newTab(t, true)
	defer tb.close()
	tb.open(t, srv.URL+"/")
	done := tb.state(t).Done
	tb.editModel(t, "#@ gaussian far mean.a=9 mean.b=1 sd.a=1 sd.b=0.8 corr.a.b=0.4\nparam a\nparam b\n-(a^2)/2 - (b - a^2/4)^2/2\n")
	tb.waitDone(t, done, 90*time.Second)
	waitFor(t, tb, 20*time.Second, "the candidate's column", `!!document.querySelector("table.results th.cand-col")`)
	// The candidate's contours (inside the plot's clip group) against the
	// plot area, in the SVG's units.
	out := eval[[]float64](t, tb, 5*time.Second, `(() => {
  const clip = document.querySelector("#bc-f01-clip rect"); if (!clip) return [];
  const box = clip.getBBox(); let lo = Infinity, hi = -Infinity, n = 0;
  for (const p of document.querySelectorAll('svg g[clip-path] path[stroke="#c0143c"]')) {
    const b = p.getBBox(); lo = Math.min(lo, b.x); hi = Math.max(hi, b.x + b.width); n++; }
  return [n, box.x, box.x + box.width, lo, hi]; })()`)
	if len(out) != 5 || out[0] < 3 {
		t.Fatalf("the 2-D view has no candidate contours: %v", out)
	}
	if out[3] < out[1]-1 || out[4] > out[2]+1 {
		t.Errorf("the candidate's contours span x = %.1f..%.1f, beyond the plot area %.1f..%.1f", out[3], out[4], out[1], out[2])
	}
	// The x axis reaches past the candidate's outer contour (a = 12.0).
	ticks := eval[string](t, tb, 5*time.Second, `Array.from(document.querySelectorAll(".plots svg text")).map(e => e.textContent).join(" ")`)
	if !strings.Contains(ticks, "12") {
		t.Errorf("the axes' labels %q do not reach a = 12", ticks)
	}
	tb.do(t, 10*time.Second, chromedp.Evaluate[chromedp.Void](`window.scrollTo(0, 0)`))
	tb.screenshot(t, "workflow-candidate-reach-1280-full.png", true)
	tb.do(t, 10*time.Second, chromedp.Evaluate[chromedp.Void](`document.querySelector("table.results").scrollIntoView()`))
	tb.screenshot(t, "workflow-candidate-table-1280.png", false)

	// Three parameters: the grid's shared range of a reaches the
	// candidate in its marginal and in both pairs with a.
	done = tb.state(t).Done
	tb.editModel(t, "#@ gaussian far mean.a=9 mean.b=1 mean.c=0 sd.a=1 sd.b=0.8 sd.c=1\n#@ points a=41 b=41 c=41\nparam a\nparam b\nparam c\n-(a^2)/2 - (b - a^2/4)^2/2 - c^2/2\n")
	tb.waitDone(t, done, 120*time.Second)
	waitFor(t, tb, 20*time.Second, "the pair grid", `!!document.querySelector("#bc-g10-clip rect")`)
	for _, id := range []string{"bc-g00", "bc-g10", "bc-g20"} {
		out := eval[[]float64](t, tb, 5*time.Second, `(() => {
  const clip = document.querySelector("#`+id+`-clip rect"); if (!clip) return [];
  const svg = clip.closest("svg"); const box = clip.getBBox(); let lo = Infinity, hi = -Infinity, n = 0;
  for (const p of svg.querySelectorAll('g[clip-path] path[stroke="#c0143c"]')) {
    const b = p.getBBox(); lo = Math.min(lo, b.x); hi = Math.max(hi, b.x + b.width); n++; }
  return [n, box.x, box.x + box.width, lo, hi]; })()`)
		if len(out) != 5 || out[0] < 1 {
			t.Errorf("%s: no candidate strokes: %v", id, out)
			continue
		}
		if out[3] < out[1]-1 || out[4] > out[2]+1 {
			t.Errorf("%s: the candidate spans x = %.1f..%.1f, beyond the plot area %.1f..%.1f", id, out[3], out[4], out[1], out[2])
		}
	}
	tb.do(t, 10*time.Second, chromedp.Evaluate[chromedp.Void](`document.querySelector(".plots").scrollIntoView()`))
	tb.screenshot(t, "workflow-candidate-reach-3d-1280.png", false)
}

// testBigDataKept: pasted columns too large for a link (about 120 KB of
// CSV) stay with the saved work: the address bar's link names them, and a
// reload brings them back from the browser's storage.
func testBigDataKept(t *testing.T, b *browser, srv *siteServer) {
	tb := b.newTab(t, true)
	defer tb.close()
	tb.open(t, srv.URL+"/")
	done := tb.state(t).Done
	tb.editModel(t, normalModel)
	var paste strings.Builder
	paste.WriteString("y\n")
	for i := range 12000 {
		fmt.Fprintf(&paste, "%.8g\n", 4+math.Sqrt(float64(i)+0.5)/100)
	}
	pasteData(t, tb, paste.String())
	tb.waitDone(t, done, 120*time.Second)
	if txt := dataPanelText(t, tb); !strings.Contains(txt, "12000 values") || !strings.Contains(txt, "keeps it") {
		t.Fatalf("the data panel says %q", txt)
	}
	var hash string
	for end := time.Now().Add(20 * time.Second); time.Now().Before(end); time.Sleep(100 * time.Millisecond) {
		hash = eval[string](t, tb, 5*time.Second, `location.hash`)
		if st, err := share.Decode(hash); err == nil && st.DataLeft != "" && st.Model == normalModel {
			break
		}
		hash = ""
	}
	if hash == "" {
		t.Fatalf("the address bar's link never named the table left out: %q", eval[string](t, tb, 5*time.Second, `location.hash`))
	}
	if n := eval[int](t, tb, 5*time.Second, `Object.keys(localStorage).filter((k) => k.startsWith("bellcheck.d.")).length`); n != 1 {
		t.Errorf("%d tables in local storage, want 1", n)
	}
	tb.do(t, 30*time.Second, chromedp.Reload())
	tb.waitDone(t, 0, 120*time.Second)
	if txt := dataPanelText(t, tb); !strings.Contains(txt, "12000 values") || !strings.Contains(txt, "your saved work") {
		t.Errorf("after a reload the data panel says %q", txt)
	}
	if got := tb.editorText(t); got != normalModel {
		t.Errorf("after a reload the model is %q", got)
	}
	if n := eval[int](t, tb, 5*time.Second, `document.querySelectorAll("table.results tr.sec").length`); n < 2 {
		t.Errorf("after a reload %d parameter sections, want m and s (y from the kept table)", n)
	}
}

// testFitUnconstrained: a normal's sd under a 1/s prior is fitted on its
// default log scale, so the reverse-KL column is filled at once and the
// scale chooser shows log; chosen "as is", the sd has no reverse-KL fit,
// and the button beside the infinite_kl diagnostic fits it on the log
// scale again: the chooser says so and the reverse-KL column fills.
func testFitUnconstrained(t *testing.T, b *browser, srv *siteServer) {
	tb := b.newTab(t, true)
	defer tb.close()
	tb.open(t, srv.URL+"/")
	done := tb.state(t).Done
	tb.editModel(t, "y = [10.21, 10.35, 10.18, 10.42, 10.29]\nparam m\nparam s in [0, inf]\n-log(s) + sum(ld_normal(y, m, s))\n")
	st := tb.waitDone(t, done, 90*time.Second)
	reverseMeans := func() int {
		tab := tb.table(t)
		col := -1
		for i, m := range tab.Methods {
			if m == "reverse KL" {
				col = i
			}
		}
		filled := 0
		for _, sec := range tab.Sections {
			for _, row := range sec.Rows {
				if row.Label == "mean" && col >= 0 && col < len(row.Cells) {
					if v := row.Cells[col].V; v != "" && v != "–" && v != "—" {
						filled++
					}
				}
			}
		}
		return filled
	}
	scaleOfS := `document.getElementById("bc-p1-scale").value`
	if sc := eval[string](t, tb, 5*time.Second, scaleOfS); sc != "log" {
		t.Errorf("s's chooser shows %q, want its default log", sc)
	}
	if n := reverseMeans(); n != 2 {
		t.Errorf("%d reverse-KL means on the default scale, want 2", n)
	}
	eval[bool](t, tb, 5*time.Second, `((e) => { e.value = "identity"; e.dispatchEvent(new Event("change", {bubbles: true})); return true })(document.getElementById("bc-p1-scale"))`)
	st = tb.waitDone(t, st.Done, 90*time.Second)
	waitFor(t, tb, 10*time.Second, "the offer", `!!document.getElementById(`+jsString(ui.FitUnconstrainedID)+`)`)
	if n := reverseMeans(); n != 0 {
		t.Errorf("%d reverse-KL means with s as it is, want none", n)
	}
	eval[bool](t, tb, 5*time.Second, `(document.getElementById(`+jsString(ui.FitUnconstrainedID)+`).click(), true)`)
	tb.waitDone(t, st.Done, 90*time.Second)
	waitFor(t, tb, 10*time.Second, "the offer gone and s on the log scale",
		`!document.getElementById(`+jsString(ui.FitUnconstrainedID)+`) && `+scaleOfS+` === "log"`)
	if n := reverseMeans(); n != 2 {
		t.Errorf("%d reverse-KL means after fitting s on the log scale, want 2", n)
	}
}
