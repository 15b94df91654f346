//go:build browser && !(js && wasm)

package main

// TestPageTimingAB compares two builds of app.wasm side by side: each is
// served from a site of its own and opened in a browser of its own, and
// the edits alternate between them (A then B, then B then A, ...), so a
// machine whose load changes affects both alike. For each example it logs
// the medians of both builds: check to drawn (the edit to the frame after
// the results, less the check delay), result ready to drawn, and the
// runner's own figures (app/ui's performance marks). It asserts nothing
// about speed and runs only when BELLCHECK_PAGE_AB names the two builds:
//
//	BELLCHECK_PAGE_AB=/tmp/a.wasm,/tmp/b.wasm BELLCHECK_CHROMIUM=/usr/bin/chromium \
//	    go test -count=1 -tags=browser -run=PageTimingAB -v ./wasm/
//
// BELLCHECK_PAGE_TIMING sets the edits per build (default 9) and
// BELLCHECK_PAGE_EXAMPLES the examples (default decay,dose,banana);
// BELLCHECK_PAGE_AB_NO_WORKER=A (or B) serves that side without the
// analysis worker's script, so it analyses on the page's thread.

import (
	"fmt"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"testing"
	"time"

	"bellcheck/app/examples"
	"bellcheck/app/jsdom"
	"bellcheck/app/ui"
)

func TestPageTimingAB(t *testing.T) {
	builds := strings.Split(os.Getenv("BELLCHECK_PAGE_AB"), ",")
	if len(builds) != 2 {
		t.Skip("BELLCHECK_PAGE_AB does not name two builds (a.wasm,b.wasm)")
	}
	exe := chromiumPath(t)
	edits := 9
	if n, err := strconv.Atoi(os.Getenv("BELLCHECK_PAGE_TIMING")); err == nil && n > 0 {
		edits = n
	}
	ids := []string{"decay", "dose", "banana"}
	if v := os.Getenv("BELLCHECK_PAGE_EXAMPLES"); v != "" {
		ids = strings.Split(v, ",")
	}
	var srvs [2]*siteServer
	var brs [2]*browser
	for i, w := range builds {
		site := siteWith(t, w)
		if os.Getenv("BELLCHECK_PAGE_AB_NO_WORKER") == string(rune('A'+i)) {
			// This side's site has no analysis worker script: the page
			// analyses on its own thread (app/ui offload.go's fallback).
			for _, f := range []string{jsdom.WorkerScript, jsdom.WorkerScript + ".gz"} {
				if err := os.Remove(filepath.Join(site, filepath.FromSlash(f))); err != nil && !os.IsNotExist(err) {
					t.Fatal(err)
				}
			}
		}
		srvs[i] = serveSite(t, site, nil)
		brs[i] = startBrowser(t, exe, 1280, 800)
	}
	delay := float64(ui.CheckDelay) / float64(time.Millisecond)
	for _, id := range ids {
		ex, ok := examples.ByID(id)
		if !ok {
			t.Fatalf("no example %s", id)
		}
		var tabs [2]*tab
		var sts [2]pageState
		for i := range 2 {
			tabs[i] = brs[i].newTab(t, true)
			sts[i] = tabs[i].open(t, srvs[i].URL+"/")
			eval[bool](t, tabs[i], 5*time.Second, fmt.Sprintf(`(document.querySelectorAll("ul.gallery button.ex")[%d].click(), true)`, exampleIndex(t, id)))
			sts[i] = tabs[i].waitDone(t, sts[i].Done, 180*time.Second)
		}
		// A build with the analysis worker starts it after its first
		// result: give it time to load before the timed edits (both builds
		// wait alike).
		time.Sleep(abWarmup)
		vals := [2]map[string][]float64{{}, {}}
		for k := 1; k <= edits; k++ {
			order := []int{0, 1}
			if k%2 == 0 {
				order = []int{1, 0}
			}
			for _, i := range order {
				tb := tabs[i]
				tb.editModel(t, ex.Source+fmt.Sprintf("# edit %d\n", k))
				st := tb.waitDone(t, sts[i].Done, 180*time.Second)
				sts[i] = st
				drawn := st.DrawnAt[len(st.DrawnAt)-1]
				at := eval[map[string]float64](t, tb, 5*time.Second, fmt.Sprintf(`(() => {
  const out = {};
  for (const m of performance.getEntriesByType("mark")) if (m.startTime >= %f && m.startTime <= %f) {
    out[m.name] = m.startTime;
    if (m.detail) for (const [k, v] of Object.entries(m.detail)) out[m.name + "." + k] = v;
  }
  return out;
})()`, st.EditAt, drawn))
				v := vals[i]
				v["check to drawn"] = append(v["check to drawn"], drawn-st.EditAt-delay)
				for _, sh := range st.ShownDrawnAt {
					if sh >= st.EditAt {
						// The early result's frame in 3-D and 4-D (all
						// but the pairs); else the result's own.
						v["check to first drawn"] = append(v["check to first drawn"], sh-st.EditAt-delay)
						break
					}
				}
				if r, ok := at[ui.MarkResult]; ok {
					v["result ready to drawn"] = append(v["result ready to drawn"], drawn-r)
				}
				if s, ok := at[ui.MarkStart]; ok {
					v["edit to start, less the delay"] = append(v["edit to start, less the delay"], s-st.EditAt-delay)
				}
				for key, x := range at {
					if strings.Contains(key, ".") {
						v[key] = append(v[key], x)
					}
				}
				v["longest task"] = append(v["longest task"], eval[float64](t, tb, 5*time.Second, fmt.Sprintf(`window.__bc.longestSince(%f)`, st.EditAt)))
			}
		}
		for i := range 2 {
			tabs[i].close()
		}
		var keys []string
		for k := range vals[0] {
			keys = append(keys, k)
		}
		for k := range vals[1] {
			if _, ok := vals[0][k]; !ok {
				keys = append(keys, k) // a figure only one build reports
			}
		}
		sort.Strings(keys)
		var b strings.Builder
		fmt.Fprintf(&b, "%s, %d edits each, medians: A = %s, B = %s", id, edits, filepath.Base(builds[0]), filepath.Base(builds[1]))
		for _, k := range keys {
			fmt.Fprintf(&b, "\n    %-34s A %8.1f   B %8.1f   (A: %s; B: %s)", k, timingMedian(vals[0][k]), timingMedian(vals[1][k]),
				timingList(vals[0][k]), timingList(vals[1][k]))
		}
		t.Log(b.String())
	}
}

// abWarmup is the pause after each example's first result, before the
// timed edits.
const abWarmup = 4 * time.Second

// siteWith writes the static site with the given app.wasm (and its
// compressed copy) in place of ../web's.
func siteWith(t *testing.T, wasm string) string {
	t.Helper()
	dir := buildSite(t)
	target := filepath.Join(dir, "web", "app.wasm")
	if err := copyFile(target, wasm); err != nil {
		t.Fatal(err)
	}
	if err := gzipFile(target+".gz", target); err != nil {
		t.Fatal(err)
	}
	return dir
}
