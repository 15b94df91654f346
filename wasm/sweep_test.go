//go:build !(js && wasm)

package main

import (
	"bufio"
	"context"
	"encoding/json"
	"math"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"bellcheck/app/ui"
	"bellcheck/engine"
	"bellcheck/engine/model"
)

// A sweep of a Gaussian's sd constant gives log Z = log(sd sqrt(2 pi)) at
// each value (closed form: the integral of exp(-x²/(2 sd²))), as JSON lines
// and as a table; the range comes from the file's #@ vary line or --over.
func TestSweepGaussianSD(t *testing.T) {
	dir := t.TempDir()
	file := writeFile(t, dir, "sd.txt", "#@ vary sd=0.5:3\nsd = 1\nparam x\n-x^2/(2*sd^2)\n")
	code, stdout, stderr := runCLI(t, "", "sweep", "--json", "--steps", "6", "--show", "exact.log_z,laplace.sd.0", file)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	sc := bufio.NewScanner(strings.NewReader(stdout))
	n := 0
	for sc.Scan() {
		var line map[string]any
		if err := json.Unmarshal(sc.Bytes(), &line); err != nil {
			t.Fatalf("line %q: %v", sc.Text(), err)
		}
		sd := 0.5 + 0.5*float64(n)
		if line["constant"] != "sd" || math.Abs(line["value"].(float64)-sd) > 1e-12 {
			t.Errorf("line %d: %v", n, line)
		}
		want := math.Log(sd * math.Sqrt(2*math.Pi))
		if got := line["exact.log_z"].(float64); math.Abs(got-want) > 1e-7 {
			t.Errorf("sd %g: log Z %.10g, want %.10g", sd, got, want)
		}
		// The Laplace fit of a normal is the normal itself (closed form).
		if got := line["laplace.sd.0"].(float64); math.Abs(got-sd) > 1e-7 {
			t.Errorf("sd %g: Laplace sd %g", sd, got)
		}
		n++
	}
	if n != 6 {
		t.Errorf("%d lines, want 6", n)
	}
	code, stdout, stderr = runCLI(t, "", "sweep", "--over", "sd=2:4", "--steps", "2", "--show", "exact.log_z", file)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	rows := strings.Split(strings.TrimSpace(stdout), "\n")
	if len(rows) != 3 || !strings.Contains(rows[0], "exact.log_z") {
		t.Fatalf("table %q", stdout)
	}
	// log(4 sqrt(2 pi)) = 2.3052 to five digits (closed form).
	if f := strings.Fields(rows[2]); len(f) != 2 || f[0] != "4" || f[1] != "2.3052" {
		t.Errorf("last row %q", rows[2])
	}
}

// A sweep's mistakes are usage errors that say what is wrong.
func TestSweepErrors(t *testing.T) {
	dir := t.TempDir()
	plain := writeFile(t, dir, "plain.txt", "sd = 1\nk = 2\nparam x\n-x^2/(2*sd^2*k)\n")
	for _, tc := range []struct {
		args []string
		want string
	}{
		{[]string{plain}, "no constant to sweep"},
		{[]string{"--vary", "sd=1:2", "--vary", "k=1:2", plain}, "several constants"},
		{[]string{"--over", "x=0:1", plain}, "x is a parameter"},
		{[]string{"--over", "sd=2:1", plain}, "finite LO < HI"},
		{[]string{"--over", "sd=1:2", "--show", "exact.nope", plain}, `no "nope" in exact`},
		{[]string{"--over", "sd=1:2", "--show", "exact.mean.3", plain}, "not an index"},
		{[]string{"--over", "sd=1:2", "--steps", "1", plain}, "want 2 to"},
	} {
		code, _, stderr := runCLI(t, "", append([]string{"sweep"}, tc.args...)...)
		if code != exitUsage || !strings.Contains(stderr, tc.want) {
			t.Errorf("sweep %v: exit %d, stderr %q; want exit 2 and %q", tc.args, code, stderr, tc.want)
		}
	}
}

const candModel = "param x\nparam y\n-(2*(x - 1)^2 - 1.2*(x - 1)*(y + 1) + (y + 1)^2)/(2*1.64)\n"

// A candidate given as a setting line, as a flag and through the page's
// API gives the same JSON; its scores equal the closed-form KL between two
// normals (see engine's TestCandidateShiftedKL for the formula).
func TestCandidateLineFlagAndPageAgree(t *testing.T) {
	dir := t.TempDir()
	line := "#@ gaussian mine mean.x=1.5 mean.y=-1 sd.x=1 sd.y=2 corr.x.y=0.25\n"
	withLine := writeFile(t, dir, "line.txt", line+candModel)
	bare := writeFile(t, dir, "bare.txt", candModel)
	a := fitJSON(t, withLine)
	b := fitJSON(t, "--gaussian", "mine mean.x=1.5 mean.y=-1 sd.x=1 sd.y=2 corr.x.y=0.25", bare)
	if a != b {
		t.Errorf("line and flag differ:\n%s\n%s", a, b)
	}
	src, _ := json.Marshal(candModel)
	page, err := ui.APIAnalyse([]string{string(src), `{"candidates": [{"name": "mine", "mean": [1.5, -1], "cov": [[1, 0.5], [0.5, 4]]}]}`})
	if err != nil {
		t.Fatal(err)
	}
	if got := resultJSON(t, page); got != a {
		t.Errorf("the page's API differs from the command line:\n%s\n%s", got, a)
	}
	var res struct {
		Candidates map[string]struct {
			KLqp float64 `json:"kl_q_p"`
		} `json:"candidates"`
	}
	if err := json.Unmarshal([]byte(a), &res); err != nil {
		t.Fatal(err)
	}
	// KL(q||p) for q = N((1.5, -1), [[1, .5], [.5, 4]]), p = N((1, -1),
	// [[1, .6], [.6, 2]]): (tr(P⁻¹Q) + dm'P⁻¹dm - 2 + log(det P/det Q))/2
	// with P⁻¹ = [[2, -.6], [-.6, 1]]/1.64, tr(P⁻¹Q) = (2 - .6 - .6 + 4)/1.64,
	// dm'P⁻¹dm = .25*2/1.64, det P = 1.64, det Q = 3.75 (closed form).
	want := 0.5 * ((2-0.3-0.3+4)/1.64 + 0.5/1.64 - 2 + math.Log(1.64/3.75))
	if got := res.Candidates["mine"].KLqp; math.Abs(got-want) > 1e-5 {
		t.Errorf("KL(q||p) %.8g, closed form %.8g", got, want)
	}
	// The table has the candidate's column.
	code, stdout, _ := runCLI(t, "", "fit", withLine)
	if code != exitOK || !strings.Contains(stdout, "mine (yours)") {
		t.Errorf("table without the candidate:\n%s", stdout)
	}
	// A bad candidate in the file names its line and column.
	bad := writeFile(t, dir, "bad.txt", "\n#@ gaussian g mean.x=0 mean.y=0 cov.x.x=1 cov.y.y=1 cov.x.y=1\n"+candModel)
	code, _, stderr := runCLI(t, "", "fit", bad)
	if code != exitModel || !strings.Contains(stderr, "bad.txt:2:13: candidate g") {
		t.Errorf("exit %d, stderr %q", code, stderr)
	}
}

// A cost model's table shows J at each mode (closed form: J = 3 at a = 2
// for (a - 2)²/2 + 3).
func TestCostTable(t *testing.T) {
	code, stdout, stderr := runCLI(t, "param a\ncost (a - 2)^2/2 + 3\n", "fit", "-")
	if code != exitOK || !strings.Contains(stdout, "at (2)  J 3  mass 1") {
		t.Errorf("exit %d, stderr %s, table:\n%s", code, stderr, stdout)
	}
}

// A constant marked to vary reaches the result's live list the same way
// from a #@ vary line, a --vary flag and the page's API.
func TestVaryLineFlagAndPageAgree(t *testing.T) {
	dir := t.TempDir()
	body := "sd = 1.5\nparam x\n-x^2/(2*sd^2)\n"
	withLine := writeFile(t, dir, "line.txt", "#@ vary sd=0.5:3\n"+body)
	bare := writeFile(t, dir, "bare.txt", body)
	a := fitJSON(t, withLine)
	b := fitJSON(t, "--vary", "sd=0.5:3", bare)
	if a != b {
		t.Errorf("line and flag differ:\n%s\n%s", a, b)
	}
	src, _ := json.Marshal(body)
	page, err := ui.APIAnalyse([]string{string(src), `{"vary": [{"name": "sd", "lo": 0.5, "hi": 3}]}`})
	if err != nil {
		t.Fatal(err)
	}
	if got := resultJSON(t, page); got != a {
		t.Errorf("the page's API differs from the command line:\n%s\n%s", got, a)
	}
	if !strings.Contains(a, `"live":[{"hi":3,"lo":0.5,"name":"sd","value":1.5}]`) {
		t.Errorf("no live constant in %s", a)
	}
}

// A sweep forecast (one analysis's forecast times --steps) to take longer
// than --max-time is refused at once, with the forecast and the cheaper
// plans, as fit refuses one analysis.
func TestSweepRefusesWorkBeyondMaxTime(t *testing.T) {
	src := "c = 1\n" + costlyModel(2000)
	code, stdout, stderr := runCLI(t, src, "sweep", "--max-time", "1ms", "--over", "c=0:1", "--show", "exact.log_z", "-")
	if code != exitModel || stdout != "" {
		t.Fatalf("exit %d, stdout %q; want exit 1 and no table", code, stdout)
	}
	for _, want := range []string{"the sweep would take about", "11 analyses, each about", "grid points at", "more than --max-time 1ms", "Allow it with --max-time"} {
		if !strings.Contains(stderr, want) {
			t.Errorf("stderr %q lacks %q", stderr, want)
		}
	}
	if code, _, stderr := runCLI(t, "#@ vary c=1:2\nc = 1\n-x^2/(2*c)\n", "sweep", "--max-time", "-1s", "-"); code != exitUsage || !strings.Contains(stderr, "--max-time") {
		t.Errorf("a negative --max-time: exit %d, %q", code, stderr)
	}
	// Without a bound a cheap sweep runs.
	if code, _, stderr := runCLI(t, "#@ vary c=1:2\nc = 1\n-x^2/(2*c)\n", "sweep", "--max-time", "0", "--steps", "2", "--quiet", "-"); code != exitOK {
		t.Errorf("--max-time 0: exit %d, %q", code, stderr)
	}
}

// The refusal's plans: the time for all values with room to spare, the
// most values that fit, and a grid that fits each analysis into its share
// of the bound (Estimate.PointsWithin).
func TestSweepTooLongPlans(t *testing.T) {
	one := engine.Estimate{Dim: 2, Points: 301 * 301, PerPoint: 10 * time.Microsecond, PerDeriv: 100 * time.Microsecond, Total: 2 * time.Second}
	msg := sweepTooLong("m.txt", 11, one, 10*time.Second)
	n := one.PointsWithin(10 * time.Second / 11)
	for _, want := range []string{"about 22s (11 analyses", "more than --max-time 10s", "--max-time 1m0s", "--steps 5", "--points " + strconv.Itoa(n)} {
		if !strings.Contains(msg, want) {
			t.Errorf("message %q lacks %q", msg, want)
		}
	}
	if n < 11 || n >= 301 {
		t.Errorf("PointsWithin %d", n)
	}
	msg = sweepTooLong("m.txt", 3, engine.Estimate{Dim: 4, Points: 41 * 41 * 41 * 41, PerPoint: time.Millisecond, Total: time.Hour}, time.Second)
	if strings.Contains(msg, "--steps") || !strings.Contains(msg, "no grid of this model is coarse enough") {
		t.Errorf("message %q", msg)
	}
}

// A sweep's progress reports are its analyses' progress placed in the
// whole: the i-th of n at fraction f is (i + f) / n, naming the value.
func TestSweepProgress(t *testing.T) {
	var got []engine.Progress
	rec := func(p engine.Progress) { got = append(got, p) }
	sweepProgress(rec, 2, 4, "k", 1.5)(engine.Progress{Fraction: 0.5, Stage: "grid"})
	if len(got) != 1 || got[0].Fraction != 0.625 || got[0].Stage != "k = 1.5: grid" {
		t.Errorf("reported %+v, want 0.625 at k = 1.5: grid", got)
	}
	if sweepProgress(nil, 0, 1, "k", 1) != nil {
		t.Error("--quiet should report nothing")
	}
}

// expiringCtx is a context whose deadline passes when expire is called (a
// --max-time that runs out at a chosen moment, without waiting for it).
type expiringCtx struct {
	context.Context
	done chan struct{}
	once sync.Once
}

func newExpiringCtx() *expiringCtx {
	return &expiringCtx{Context: context.Background(), done: make(chan struct{})}
}
func (c *expiringCtx) expire()               { c.once.Do(func() { close(c.done) }) }
func (c *expiringCtx) Done() <-chan struct{} { return c.done }
func (c *expiringCtx) Err() error {
	select {
	case <-c.done:
		return context.DeadlineExceeded
	default:
		return nil
	}
}

// A sweep that runs out of --max-time during its second value stops there,
// with the first value's row printed and a message naming where it stopped.
func TestSweepStopsAtMaxTime(t *testing.T) {
	m, err := model.Parse("c = 1\nparam x\n-x^2/(2*c)\n")
	if err != nil {
		t.Fatal(err)
	}
	ctx := newExpiringCtx()
	var stages []string
	report := func(p engine.Progress) {
		stages = append(stages, p.Stage)
		if strings.HasPrefix(p.Stage, "c = 2:") {
			ctx.expire()
		}
	}
	sw := sweep{file: "m.txt", m: m, name: "c", values: []float64{1, 2, 3}, paths: []string{"exact.log_z"},
		maxTime: time.Minute, est: engine.Estimate{Points: 3, PerPoint: time.Microsecond, Total: 3 * time.Millisecond}, report: report}
	var stdout, stderr strings.Builder
	code := sw.run(ctx, &stdout, &stderr)
	if code != exitModel {
		t.Fatalf("exit %d, want 1; stderr %q", code, stderr.String())
	}
	rows := strings.Split(strings.TrimSpace(stdout.String()), "\n")
	// log Z of exp(-x^2/2) is log sqrt(2 pi) = 0.91894 (closed form).
	if len(rows) != 2 || !strings.Contains(rows[1], "0.91894") {
		t.Errorf("rows %q, want the header and c = 1's", rows)
	}
	if want := "stopped after --max-time 1m0s at c = 2, 1 of 3 values done"; !strings.Contains(stderr.String(), want) {
		t.Errorf("stderr %q lacks %q", stderr.String(), want)
	}
	if len(stages) == 0 || !strings.HasPrefix(stages[0], "c = 1:") {
		t.Errorf("progress stages %q, want them named by the value", stages)
	}
}
