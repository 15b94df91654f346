//go:build browser && !(js && wasm)

package main

// TestPageTiming splits the page's time from a model edit to the results
// drawn, for the 1-D and the 2-D benchmark examples, with the performance
// marks the page's runner records (app/ui MarkStart ... MarkUpdated) and the
// probe's "drawn" moment (the frame after the results area turned ready).
// It prints the least and the median of 9 edits (or of the number
// BELLCHECK_PAGE_TIMING gives; the least is the figure least disturbed by
// other work on the machine) and asserts nothing about speed; it runs only
// when BELLCHECK_PAGE_TIMING is set:
//
//	make wasm && BELLCHECK_PAGE_TIMING=1 BELLCHECK_CHROMIUM=/usr/bin/chromium \
//	    go test -count=1 -tags=browser -run=PageTiming -v ./wasm/
//
// BELLCHECK_PAGE_EXAMPLES names other gallery examples, comma-separated
// (lorenz-short,lorenz-long, say).

import (
	"fmt"
	"math"
	"os"
	"slices"
	"sort"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/chromedp/cdproto/cdp"
	"github.com/chromedp/cdproto/profiler"
	"github.com/chromedp/chromedp"

	"bellcheck/app/examples"
	"bellcheck/app/ui"
)

func TestPageTiming(t *testing.T) {
	if os.Getenv("BELLCHECK_PAGE_TIMING") == "" {
		t.Skip("BELLCHECK_PAGE_TIMING is not set")
	}
	exe := chromiumPath(t)
	srv := serveSite(t, buildSite(t), nil)
	b := startBrowser(t, exe, 1280, 800)
	edits := 9
	if n, err := strconv.Atoi(os.Getenv("BELLCHECK_PAGE_TIMING")); err == nil && n > 0 {
		edits = n
	}
	marks := []string{ui.MarkStart, ui.MarkResult, ui.MarkPrepared, ui.MarkHanded, ui.MarkUpdated}
	phases := []string{"analysis", "figures and table", "to the page", "page update", "layout and paint"}
	ids := []string{"decay", "dose", "banana"}
	if v := os.Getenv("BELLCHECK_PAGE_EXAMPLES"); v != "" {
		ids = strings.Split(v, ",")
	}
	for _, id := range ids {
		ex, ok := examples.ByID(id)
		if !ok {
			t.Fatalf("no example %s", id)
		}
		tb := b.newTab(t, true)
		st := tb.open(t, srv.URL+"/")
		eval[bool](t, tb, 5*time.Second, fmt.Sprintf(`(document.querySelectorAll("ul.gallery button.ex")[%d].click(), true)`, exampleIndex(t, id)))
		st = tb.waitDone(t, st.Done, 180*time.Second)
		split := make([][]float64, len(phases))
		var ready, checking, toDrawn []float64
		details := map[string][]float64{} // the marks' details: "mark.key" -> per edit
		var windows [][]float64           // per edit: the marks' times and the drawing's, in ms
		tr := startTrace(t, tb)
		for k := 1; k <= edits; k++ {
			tb.editModel(t, ex.Source+fmt.Sprintf("# edit %d\n", k))
			st = tb.waitDone(t, st.Done, 180*time.Second)
			drawn := st.DrawnAt[len(st.DrawnAt)-1]
			at := eval[map[string]float64](t, tb, 5*time.Second, fmt.Sprintf(`(() => {
  const out = {};
  for (const m of performance.getEntriesByType("mark")) if (m.startTime >= %f && m.startTime <= %f) out[m.name] = m.startTime;
  return out;
})()`, st.EditAt, drawn))
			det := eval[map[string]map[string]float64](t, tb, 5*time.Second, fmt.Sprintf(`(() => {
  const out = {};
  for (const m of performance.getEntriesByType("mark")) if (m.startTime >= %f && m.startTime <= %f && m.detail) out[m.name] = m.detail;
  return out;
})()`, st.EditAt, drawn))
			for mk, kv := range det {
				for key, v := range kv {
					details[mk+"."+key] = append(details[mk+"."+key], v)
				}
			}
			times := make([]float64, 0, len(marks)+1)
			for _, m := range marks {
				v, ok := at[m]
				if !ok {
					t.Fatalf("%s edit %d: no mark %s between the edit and the drawing (%v)", id, k, m, at)
				}
				times = append(times, v)
			}
			times = append(times, drawn)
			windows = append(windows, times)
			for i := range phases {
				split[i] = append(split[i], times[i+1]-times[i])
			}
			ready = append(ready, drawn-at[ui.MarkResult])
			checking = append(checking, at[ui.MarkStart]-st.EditAt-float64(ui.CheckDelay)/float64(time.Millisecond))
			toDrawn = append(toDrawn, drawn-st.EditAt-float64(ui.CheckDelay)/float64(time.Millisecond))
		}
		cpu := tr.mainThreadCPU(t, tb, windows)
		if os.Getenv("BELLCHECK_PAGE_PROFILE") != "" {
			st = profileEdits(t, tb, st, ex.Source, 5)
		}
		tb.close()
		var parts []string
		for i, ph := range phases {
			parts = append(parts, fmt.Sprintf("%s %.1f / %.1f", ph, slices.Min(split[i]), timingMedian(split[i])))
		}
		t.Logf("%s: result ready to drawn: least %.1f ms, median %.1f ms of %d edits (%s); each phase least / median in ms: %s; "+
			"before them, the check (from the edit to the analysis's start, less the check delay): least %.1f, median %.1f",
			id, slices.Min(ready), timingMedian(ready), edits, timingList(ready), strings.Join(parts, ", "),
			slices.Min(checking), timingMedian(checking))
		keys := make([]string, 0, len(details))
		for k := range details {
			keys = append(keys, k)
		}
		sort.Strings(keys)
		var dparts []string
		for _, k := range keys {
			dparts = append(dparts, fmt.Sprintf("%s %.1f (%s)", k, timingMedian(details[k]), timingList(details[k])))
		}
		t.Logf("%s: check to drawn (edit to drawn less the check delay): least %.1f ms, median %.1f ms (%s); the runner's own figures, median (each edit):\n    %s",
			id, slices.Min(toDrawn), timingMedian(toDrawn), timingList(toDrawn), strings.Join(dparts, "\n    "))
		var cparts []string
		var cready []float64
		for i, ph := range phases {
			col := make([]float64, len(cpu))
			for k := range cpu {
				col[k] = cpu[k][i]
			}
			cparts = append(cparts, fmt.Sprintf("%s %.1f", ph, timingMedian(col)))
		}
		for k := range cpu {
			sum := 0.0
			for i := 1; i < len(phases); i++ {
				sum += cpu[k][i]
			}
			cready = append(cready, sum)
		}
		t.Logf("%s: main thread CPU from result ready to drawn: median %.1f ms (%s); each phase, median CPU ms: %s",
			id, timingMedian(cready), timingList(cready), strings.Join(cparts, ", "))
	}
}

func timingMedian(v []float64) float64 {
	if len(v) == 0 {
		return math.NaN() // a figure one build of an A/B run does not report
	}
	s := append([]float64(nil), v...)
	sort.Float64s(s)
	if len(s)%2 == 1 {
		return s[len(s)/2]
	}
	return (s[len(s)/2-1] + s[len(s)/2]) / 2
}

func timingList(v []float64) string {
	parts := make([]string, len(v))
	for i, x := range v {
		parts[i] = fmt.Sprintf("%.0f", x)
	}
	return strings.Join(parts, ", ")
}

// profileEdits, when BELLCHECK_PAGE_PROFILE is set, records chromium's
// JavaScript and WebAssembly CPU profile over n edits of the example in the
// tab and logs the functions with the most time (self, and inclusive for
// the page's and go-app's entry points). Function names need a wasm built
// without -s -w.
func profileEdits(t *testing.T, tb *tab, st pageState, src string, n int) pageState {
	if _, err := chromedp.Call(tb.ctx, profiler.Enable, cdp.Empty{}); err != nil {
		t.Fatal(err)
	}
	if _, err := chromedp.Call(tb.ctx, profiler.SetSamplingInterval, profiler.SetSamplingIntervalParams{Interval: 200}); err != nil {
		t.Fatal(err)
	}
	if _, err := chromedp.Call(tb.ctx, profiler.Start, cdp.Empty{}); err != nil {
		t.Fatal(err)
	}
	for k := 1; k <= n; k++ {
		tb.editModel(t, src+fmt.Sprintf("# profiled edit %d\n", k))
		st = tb.waitDone(t, st.Done, 180*time.Second)
	}
	res, err := chromedp.Call(tb.ctx, profiler.Stop, cdp.Empty{})
	if err != nil {
		t.Fatal(err)
	}
	p := res.Profile
	parent := map[int64]int64{}
	byID := map[int64]*profiler.ProfileNode{}
	for _, nd := range p.Nodes {
		byID[nd.ID] = nd
		for _, c := range nd.Children {
			parent[c] = nd.ID
		}
	}
	self, incl := map[string]float64{}, map[string]float64{}
	total := 0.0
	for i, id := range p.Samples {
		if i+1 >= len(p.TimeDeltas) {
			break
		}
		dt := float64(p.TimeDeltas[i+1]) / 1000 / float64(n)
		nd := byID[id]
		name := nd.CallFrame.FunctionName
		if name == "(idle)" || name == "(program)" || name == "(root)" {
			continue
		}
		total += dt
		self[name] += dt
		seen := map[string]bool{}
		for cur, ok := id, true; ok; cur, ok = parent[cur] {
			fn := byID[cur].CallFrame.FunctionName
			if !seen[fn] {
				seen[fn] = true
				incl[fn] += dt
			}
		}
	}
	top := func(m map[string]float64, k int, filter func(string) bool) string {
		type kv struct {
			k string
			v float64
		}
		var list []kv
		for name, v := range m {
			if filter == nil || filter(name) {
				list = append(list, kv{name, v})
			}
		}
		sort.Slice(list, func(i, j int) bool { return list[i].v > list[j].v })
		var b strings.Builder
		for i := 0; i < k && i < len(list); i++ {
			fmt.Fprintf(&b, "\n    %7.2f ms  %s", list[i].v, list[i].k)
		}
		return b.String()
	}
	t.Logf("profile per edit: %.1f ms busy; self time:%s", total, top(self, 25, nil))
	byPart := map[string]float64{}
	for name, v := range self {
		byPart[profilePart(name)] += v
	}
	t.Logf("self time by part of the program:%s", top(byPart, 20, nil))
	t.Logf("inclusive time of the page's parts:%s", top(incl, 60, func(s string) bool {
		for _, part := range []string{"_app_ui.", "go_app_v10", "reflect.DeepEqual", "_app_share.", "_app_jsdom.", "runtime.gcBgMarkWorker", "replaceState"} {
			if strings.Contains(s, part) {
				return true
			}
		}
		return false
	}))
	return st
}

// profilePart sorts a function of the profile into a part of the program
// by its name (the wasm's names are the Go symbols with / and . mangled).
func profilePart(name string) string {
	has := func(parts ...string) bool {
		for _, p := range parts {
			if strings.Contains(name, p) {
				return true
			}
		}
		return false
	}
	switch {
	case has("bellcheck_engine", "math.", "gonum", "sort.", "internal_reflectlite", "slices."):
		return "engine (and math, sort)"
	case has("bellcheck_app_figure", "bellcheck_app_plot"):
		return "figures (app/figure, app/plot)"
	case has("bellcheck_app_share", "compress_", "encoding_base64", "hash_"):
		return "link encoding (app/share)"
	case has("bellcheck_app_ui", "bellcheck_app_jsdom", "bellcheck_app_export"):
		return "page (app/ui, app/jsdom)"
	case has("go_app"):
		return "go-app"
	case has("reflect."):
		return "reflect"
	case has("encoding_json", "strconv.", "fmt.", "strings.", "unicode"):
		return "strings, fmt, json"
	case has("runtime.gc", "runtime.scan", "runtime.mark", "runtime.greyobject", "runtime.findObject", "SpanScan", "spanScan",
		"runtime.sweep", "runtime.typePointers", "runtime.__gcWork", "runtime.wbBuf", "runtime.bulkBarrier", "runtime.__mspan_.sweep",
		"runtime.__spanInlineMarkBits", "runtime.__gcBits", "runtime.tryDeferToSpanScan", "runtime.__spanQueue", "runtime.heapSetType"):
		return "Go garbage collector"
	case has("runtime.malloc", "runtime.__mspan_", "runtime.__mcache", "runtime.__mcentral", "runtime.__mheap", "runtime.memclr",
		"runtime.nextFree", "runtime.newobject", "runtime.makeslice", "runtime.growslice", "runtime.newarray", "runtime.memmove",
		"runtime.typedmemmove", "runtime.typedslicecopy", "runtime.mapassign", "runtime.mapaccess", "runtime.concat", "runtime.slicebyte", "internal_runtime_maps"):
		return "Go allocation, copies, maps"
	case has("syscall_js", "syscall/js", "safejs", "copyBytesToJS"):
		return "syscall/js"
	case has("runtime.", "internal_runtime", "internal_sync", "sync.", "time."):
		return "Go runtime (scheduler, other)"
	case name == "(garbage collector)":
		return "browser's garbage collector"
	}
	return "browser and JavaScript (" + name + ", ...)"
}

// mainThreadCPU ends the trace and returns, for each window (the marks'
// times and the drawing's, in the page's ms), the CPU time of the page's
// main thread in each phase: the thread CPU of its tasks (RunTask), each
// counted for the part of its duration inside the phase.
func (tr *trace) mainThreadCPU(t *testing.T, tb *tab, windows [][]float64) [][]float64 {
	tr.end(t, tb)
	tr.mu.Lock()
	defer tr.mu.Unlock()
	// The main thread names itself; a mark of the page gives the offset
	// between the trace's clock and performance.now().
	var main int64 = -1
	for _, e := range tr.events {
		if e.Ph == "M" && e.Name == "thread_name" && e.Args.Name == "CrRendererMain" {
			for _, m := range tr.events {
				if m.Tid == e.Tid && m.Cat == "blink.user_timing" && m.Name == ui.MarkResult {
					main = e.Tid
				}
			}
		}
	}
	if main < 0 {
		t.Fatal("no main thread with the page's marks in the trace")
	}
	if os.Getenv("BELLCHECK_TRACE_DEBUG") != "" {
		names := map[string]int{}
		tdur := 0
		for _, e := range tr.events {
			if e.Tid == main && e.Ph == "X" {
				names[e.Cat+"/"+e.Name]++
				if e.Tdur > 0 {
					tdur++
				}
			}
		}
		t.Logf("main thread events: %v; with tdur %d", names, tdur)
	}
	var markTs []float64
	for _, e := range tr.events {
		if e.Tid == main && e.Cat == "blink.user_timing" && e.Name == ui.MarkResult {
			markTs = append(markTs, e.Ts/1000)
		}
	}
	sort.Float64s(markTs)
	// Each window's result mark is the first trace mark at or after the
	// previous window's; their difference is the clock offset.
	out := make([][]float64, len(windows))
	for k, w := range windows {
		if k >= len(markTs) {
			t.Fatalf("%d result marks in the trace for %d edits", len(markTs), len(windows))
		}
		offset := markTs[len(markTs)-len(windows)+k] - w[1]
		out[k] = make([]float64, len(w)-1)
		if os.Getenv("BELLCHECK_TRACE_DEBUG") != "" {
			// What the main thread did from the result to the drawing, by
			// event (nested events count in each of their parents too).
			by := map[string]float64{}
			for _, e := range tr.events {
				if e.Tid != main || e.Ph != "X" || e.Cat != "devtools.timeline" {
					continue
				}
				s, d := e.Ts/1000-offset, e.Dur/1000
				lo, hi := max(s, w[1]), min(s+d, w[len(w)-1])
				if hi > lo {
					by[e.Name] += hi - lo
				}
			}
			t.Logf("edit %d, result to drawn, wall ms by event: %v", k+1, by)
		}
		for _, e := range tr.events {
			if e.Tid != main || e.Ph != "X" || e.Name != "ThreadControllerImpl::RunTask" || e.Dur <= 0 {
				continue
			}
			s, d := e.Ts/1000-offset, e.Dur/1000
			for i := 0; i+1 < len(w); i++ {
				lo, hi := max(s, w[i]), min(s+d, w[i+1])
				if hi > lo {
					out[k][i] += e.Tdur / 1000 * (hi - lo) / d
				}
			}
		}
	}
	return out
}
