//go:build browser && !(js && wasm)

package main

// TestSliderTiming measures how fast the page analyses again while a live
// constant (a #@ vary slider) moves, for a 1-D, a 2-D and a 3-D model:
//
//   - one value at a time: the slider is set and an input event sent, and
//     the next value waits for the result drawn; it reports the median time
//     from the input to the drawing, split at the runner's marks (input to
//     the analysis's start, the analysis, result ready to drawn), and the
//     updates per second that implies;
//   - a drag: input events at a fixed rate (60 a second for 3 s) from the
//     page's own timer; it reports the events sent, the results drawn
//     during the drag per second, the longest stretch without a new drawing,
//     the time from the last input to the last drawing and the longest task.
//
// It asserts nothing about speed (the machine is shared). It checks that
// the last value wins: after the drag the slider's label shows the last
// value and the results table equals the command line's for the model with
// that value (and, for the 1-D and 2-D models, a closed form). It runs only
// when BELLCHECK_SLIDER_TIMING is set (its value: the number of single
// values, default 9):
//
//	make wasm && BELLCHECK_SLIDER_TIMING=9 BELLCHECK_CHROMIUM=/usr/bin/chromium \
//	    go test -count=1 -tags=browser -run=SliderTiming -v ./wasm/

import (
	"fmt"
	"math"
	"os"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"

	"bellcheck/app/ui"
)

// sliderModel is a model with one live constant for the slider timing.
type sliderModel struct {
	name   string
	src    string  // with "%s" where the constant's value goes
	lo, hi float64 // the vary range (as in src)
	// check compares the exact column's numbers (mean and sd per
	// parameter, in the table's order) with a closed form for the constant
	// at v; nil when there is none.
	check func(v float64, means, sds []float64) error
}

var sliderModels = []sliderModel{
	{
		name: "decay rate (1-D)",
		src: `#@ vary window=5:20
counts = [3, 1, 4, 2, 0, 2, 5, 1]
window = %s
param rate in [0, inf]
ld_gamma(rate, 2, 4) + sum(ld_poisson(counts, rate * window))
`,
		lo: 5, hi: 20,
		// Gamma(2, rate 4) prior and Poisson counts (sum 18 in 8 windows of
		// length w) give a Gamma(20, 4 + 8w) posterior (gamma-Poisson
		// conjugacy, any Bayesian handbook): mean 20/(4+8w), sd sqrt(20)/(4+8w).
		check: func(w float64, means, sds []float64) error {
			b := 4 + 8*w
			return near("mean", means[0], 20/b, 1e-3, "sd", sds[0], math.Sqrt(20)/b, 1e-3)
		},
	},
	{
		name: "banana (2-D)",
		src: `#@ vary b=0.02:0.08
param u
param v
b = %s
ld_normal(u, 0, 10) + ld_normal(v + b * u^2 - 100 * b, 0, 1)
`,
		lo: 0.02, hi: 0.08,
		// u ~ N(0, 10) and v = w - b u^2 + 100 b with w ~ N(0, 1): v has
		// mean 0 and variance 1 + b^2 Var(u^2) = 1 + 2 b^2 10^4 (the
		// variance of a squared normal is 2 sd^4, a handbook identity).
		check: func(b float64, means, sds []float64) error {
			return near("sd(u)", sds[0], 10, 0.01, "sd(v)", sds[1], math.Sqrt(1+2e4*b*b), 0.01)
		},
	},
	{
		name: "sensor (3-D)",
		src: `#@ vary gs=0.1:1
ref     = [0, 1, 2, 3, 4, 5, 6, 7]
reading = [0.18, 1.52, 2.41, 3.70, 4.55, 5.83, 6.71, 7.96]
gs = %s
param offset
param gain
param noise in [0, inf]
(sum(ld_normal(reading, offset + gain * ref, noise))
    + ld_normal(offset, 0, 1) + ld_normal(gain, 1, gs) + ld_lognormal(noise, log(0.15), 0.3))
`,
		lo: 0.1, hi: 1,
	},
}

// near checks pairs of (name, got, want, relative tolerance).
func near(args ...any) error {
	var bad []string
	num := func(x any) float64 {
		if i, ok := x.(int); ok {
			return float64(i)
		}
		return x.(float64)
	}
	for i := 0; i+3 < len(args); i += 4 {
		name, got, want, tol := args[i].(string), num(args[i+1]), num(args[i+2]), num(args[i+3])
		if math.Abs(got-want) > tol*math.Abs(want) {
			bad = append(bad, fmt.Sprintf("%s %g, want %g (within %g relative)", name, got, want, tol))
		}
	}
	if len(bad) > 0 {
		return fmt.Errorf("%s", strings.Join(bad, "; "))
	}
	return nil
}

// sliderSetJS sets the first slider to a value, sends an input event and
// returns the moment (performance.now()) it did.
const sliderSetJS = `((v) => { const el = document.getElementById("bc-live-0");
  el.value = String(v); const t0 = performance.now();
  el.dispatchEvent(new Event("input", {bubbles: true})); return t0; })(%s)`

// sliderDragJS sends input events to the first slider from a timer at rate
// a second for secs seconds, sweeping from 20 % to 80 % of its range, and
// returns the moments of the inputs and the slider's last value.
const sliderDragJS = `(async (lo, hi, rate, secs) => {
  const el = document.getElementById("bc-live-0");
  const n = Math.round(rate * secs), times = [];
  let last = "";
  await new Promise((resolve) => {
    let k = 0;
    const id = setInterval(() => {
      el.value = String(lo + (hi - lo) * (0.2 + 0.6 * k / (n - 1)));
      last = el.value;
      times.push(performance.now());
      el.dispatchEvent(new Event("input", {bubbles: true}));
      if (++k >= n) { clearInterval(id); resolve(); }
    }, 1000 / rate);
  });
  return {times, last};
})(%g, %g, %g, %g)`

func TestSliderTiming(t *testing.T) {
	if os.Getenv("BELLCHECK_SLIDER_TIMING") == "" {
		t.Skip("BELLCHECK_SLIDER_TIMING is not set")
	}
	steps := 9
	if n, err := strconv.Atoi(os.Getenv("BELLCHECK_SLIDER_TIMING")); err == nil && n > 0 {
		steps = n
	}
	exe := chromiumPath(t)
	srv := serveSite(t, buildSite(t), nil)
	b := startBrowser(t, exe, 1280, 800)
	for _, m := range sliderModels {
		t.Run(strings.Fields(m.name)[0], func(t *testing.T) {
			tb := b.newTab(t, true)
			defer tb.close()
			st := tb.open(t, srv.URL+"/")
			tb.editModel(t, fmt.Sprintf(m.src, strconv.FormatFloat((m.lo+m.hi)/2, 'g', -1, 64)))
			st = tb.waitDone(t, st.Done, 180*time.Second)
			waitFor(t, tb, 20*time.Second, "the slider", `!!document.getElementById("bc-live-0")`)
			time.Sleep(abWarmup) // the analysis worker loads after the first result
			sliderSteps(t, tb, m, st, steps)
			sliderDrag(t, tb, m, 60, 3)
			sliderDrag(t, tb, m, 10, 3)
		})
	}
}

// sliderSteps moves the slider through n values, one at a time, and logs
// the times from each input to its result drawn.
func sliderSteps(t *testing.T, tb *tab, m sliderModel, st pageState, n int) {
	var total, toStart, analysis, toDrawn []float64
	for k := 1; k <= n; k++ {
		v := m.lo + (m.hi-m.lo)*(0.2+0.6*float64(k)/float64(n))
		t0 := eval[float64](t, tb, 5*time.Second, fmt.Sprintf(sliderSetJS, strconv.FormatFloat(v, 'g', -1, 64)))
		st = tb.waitDone(t, st.Done, 180*time.Second)
		drawn := st.DrawnAt[len(st.DrawnAt)-1]
		at := eval[map[string]float64](t, tb, 5*time.Second, fmt.Sprintf(`(() => {
  const out = {};
  for (const m of performance.getEntriesByType("mark")) if (m.startTime >= %f && m.startTime <= %f) out[m.name] = m.startTime;
  return out;
})()`, t0, drawn))
		for _, name := range []string{ui.MarkStart, ui.MarkResult} {
			if _, ok := at[name]; !ok {
				t.Fatalf("%s value %d: no mark %s between the input and the drawing (%v)", m.name, k, name, at)
			}
		}
		total = append(total, drawn-t0)
		toStart = append(toStart, at[ui.MarkStart]-t0)
		analysis = append(analysis, at[ui.MarkResult]-at[ui.MarkStart])
		toDrawn = append(toDrawn, drawn-at[ui.MarkResult])
	}
	med := timingMedian(total)
	t.Logf("%s, one value at a time (%d values): input to drawn median %.1f ms (least %.1f; %s) = %.1f updates/s; "+
		"median split: input to analysis start %.1f, analysis %.1f, result ready to drawn %.1f ms",
		m.name, n, med, slices.Min(total), timingList(total), 1000/med,
		timingMedian(toStart), timingMedian(analysis), timingMedian(toDrawn))
}

// sliderDrag sends input events at rate a second for secs seconds, logs
// what was drawn meanwhile, and checks that the last value's result is the
// one shown at the end.
func sliderDrag(t *testing.T, tb *tab, m sliderModel, rate, secs float64) {
	type drag struct {
		Times []float64 `json:"times"`
		Last  string    `json:"last"`
	}
	d := eval[drag](t, tb, time.Duration(secs+30)*time.Second, fmt.Sprintf(sliderDragJS, m.lo, m.hi, rate, secs))
	if len(d.Times) == 0 {
		t.Fatal("the drag sent no input")
	}
	last, err := strconv.ParseFloat(d.Last, 64)
	if err != nil {
		t.Fatalf("the slider's last value %q: %v", d.Last, err)
	}
	// Settled: the label shows the last value, the table is not stale, the
	// output is ready and drawn, and no analysis runs.
	waitFor(t, tb, 180*time.Second, "the result for the last value", fmt.Sprintf(`(() => {
  const v = document.getElementById("bc-live-0-value"), tab = document.querySelector("table.results");
  const out = document.getElementById("bc-output");
  return v && tab && out && Math.abs(parseFloat(v.textContent.replace("\u2212", "-")) - %g) <= 1e-3 * Math.abs(%g) &&
    !tab.classList.contains("stale") && out.dataset.state === "ready" && window.__bc.drawnAt.length >= window.__bc.done; })()`, last, last))
	time.Sleep(500 * time.Millisecond) // a late result would show in the probe now
	st := tb.state(t)
	first, end := d.Times[0], d.Times[len(d.Times)-1]
	var during []float64
	lastDrawn := math.NaN()
	// Results shown during the drag: each new result generation on the
	// page (the probe's shownAt), also those followed at once by the
	// analysis of a newer value (the state then stays running).
	for _, x := range st.ShownAt {
		if x >= first && x <= end {
			during = append(during, x)
		}
	}
	for _, x := range st.DrawnAt {
		if x >= first {
			lastDrawn = x
		}
	}
	gap, prev := 0.0, first
	for _, x := range append(during, end) {
		gap = math.Max(gap, x-prev)
		prev = x
	}
	longest := eval[float64](t, tb, 5*time.Second, fmt.Sprintf(`(() => { let m = 0;
  for (const [s, d] of window.__bc.tasks) if (s + d >= %f && s <= %f) m = Math.max(m, d); return m; })()`, first, lastDrawn))
	dur := (end - first) / 1000
	t.Logf("%s, drag at %.0f events/s for %.0f s: %d inputs in %.2f s (%.1f/s); %d results shown during the drag (%.1f/s); "+
		"longest stretch without a new result shown %.0f ms; last input to last drawn %.0f ms; longest task %.0f ms; last value %s",
		m.name, rate, secs, len(d.Times), dur, float64(len(d.Times)-1)/dur, len(during), float64(len(during))/dur,
		gap, lastDrawn-end, longest, d.Last)

	// The last value wins: the exact column's means and sds are the
	// command line's for the model with the constant at the last value (to
	// the printed precision, and to 1e-9 sd for means that are rounding
	// noise around 0), and agree with the closed form where there is one.
	means, sds := exactMeansSDs(t, tb.table(t))
	cli := cliResult(t, fmt.Sprintf(m.src, d.Last))
	if len(means) != len(cli.Exact.Mean) || len(sds) != len(cli.Exact.SD) {
		t.Fatalf("%s: the table has %d means and %d sds, the command line %d and %d", m.name, len(means), len(sds), len(cli.Exact.Mean), len(cli.Exact.SD))
	}
	for i := range means {
		sd := deref(cli.Exact.SD[i])
		for _, c := range []struct {
			what string
			got  printed
			want float64
		}{{"mean", means[i], deref(cli.Exact.Mean[i])}, {"sd", sds[i], sd}} {
			if math.Abs(c.got.v-c.want) > c.got.half+1e-9*sd {
				t.Errorf("%s after the drag to %s: parameter %d's exact %s is %q on the page, the command line gives %g for that value",
					m.name, d.Last, i+1, c.what, c.got.text, c.want)
			}
		}
	}
	if m.check != nil {
		mv, sv := make([]float64, len(means)), make([]float64, len(sds))
		for i := range means {
			mv[i], sv[i] = means[i].v, sds[i].v
		}
		if err := m.check(last, mv, sv); err != nil {
			t.Errorf("%s at %s: %v", m.name, d.Last, err)
		}
	}
}

// exactMeansSDs reads the exact column's mean and sd of each parameter.
func exactMeansSDs(t *testing.T, tab resultsTable) (means, sds []printed) {
	t.Helper()
	for _, sec := range tab.Sections {
		for _, r := range sec.Rows {
			if len(r.Cells) == 0 || (r.Label != "mean" && r.Label != "sd") {
				continue
			}
			p := parsePrinted(r.Cells[0].V)
			if len(p) == 0 {
				t.Fatalf("no number in the exact %s cell %q", r.Label, r.Cells[0].V)
			}
			if r.Label == "mean" {
				means = append(means, p[0])
			} else {
				sds = append(sds, p[0])
			}
		}
	}
	if len(means) == 0 || len(sds) == 0 {
		t.Fatal("no mean or sd rows in the table")
	}
	return means, sds
}
