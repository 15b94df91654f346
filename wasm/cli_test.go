//go:build !(js && wasm)

package main

import (
	"bytes"
	"encoding/json"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"bellcheck/engine"
)

func runCLI(t *testing.T, stdin string, args ...string) (code int, stdout, stderr string) {
	t.Helper()
	var out, errOut bytes.Buffer
	code = run(args, strings.NewReader(stdin), &out, &errOut)
	return code, out.String(), errOut.String()
}

func TestUsageErrorsExitTwo(t *testing.T) {
	for _, args := range [][]string{
		{},
		{"frobnicate"},
		{"fit"},
		{"fit", "a", "b"},
		{"fit", "--no-such-flag", "a"},
	} {
		if code, _, _ := runCLI(t, "", args...); code != exitUsage {
			t.Errorf("bellcheck %v: exit %d, want %d", args, code, exitUsage)
		}
	}
}

func TestModelErrorExitsOneWithPosition(t *testing.T) {
	code, stdout, stderr := runCLI(t, "a = 1\n-x^2/2 + lgama(x)\n", "fit", "-")
	if code != exitModel {
		t.Fatalf("exit %d, want %d; stderr %q", code, exitModel, stderr)
	}
	if stdout != "" {
		t.Errorf("stdout %q, want nothing on a model error", stdout)
	}
	// The unknown function starts at line 2, column 10.
	if !strings.Contains(stderr, "-:2:10:") {
		t.Errorf("stderr %q does not give the position -:2:10:", stderr)
	}
	if !strings.Contains(stderr, "lgamma") {
		t.Errorf("stderr %q does not suggest lgamma", stderr)
	}
}

func TestMissingFileExitsOne(t *testing.T) {
	code, _, stderr := runCLI(t, "", "fit", filepath.Join(t.TempDir(), "none.txt"))
	if code != exitModel || !strings.Contains(stderr, "none.txt") {
		t.Errorf("exit %d, stderr %q: want exit 1 naming the file", code, stderr)
	}
}

// TestFitJSONStandardNormal checks the JSON contract on a standard normal,
// whose normaliser is sqrt(2 pi) (closed form): log Z = 0.9189385...
func TestFitJSONStandardNormal(t *testing.T) {
	dir := t.TempDir()
	file := filepath.Join(dir, "normal.txt")
	if err := os.WriteFile(file, []byte("-x^2/2\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	code, stdout, stderr := runCLI(t, "", "fit", "--json", file)
	if code != exitOK {
		t.Fatalf("exit %d; stderr %q", code, stderr)
	}
	var res struct {
		Params []string `json:"params"`
		Exact  struct {
			LogZ float64     `json:"log_z"`
			Mean []float64   `json:"mean"`
			Cov  [][]float64 `json:"cov"`
			Mode []float64   `json:"mode"`
		} `json:"exact"`
		Fits map[string]*struct {
			Mean []float64   `json:"mean"`
			Cov  [][]float64 `json:"cov"`
			KLqp *float64    `json:"kl_q_p"`
			KLpq *float64    `json:"kl_p_q"`
		} `json:"fits"`
		Diagnostics []struct {
			Code    string `json:"code"`
			Message string `json:"message"`
		} `json:"diagnostics"`
		Timing struct {
			Total float64 `json:"total"`
		} `json:"timing_ms"`
	}
	if err := json.Unmarshal([]byte(stdout), &res); err != nil {
		t.Fatalf("output is not JSON: %v\n%s", err, stdout)
	}
	if len(res.Params) != 1 || res.Params[0] != "x" {
		t.Errorf("params %v, want [x]", res.Params)
	}
	if want := 0.5 * math.Log(2*math.Pi); math.Abs(res.Exact.LogZ-want) > 1e-8 {
		t.Errorf("log_z %v, want %v", res.Exact.LogZ, want)
	}
	for _, name := range []string{"laplace", "reverse_kl", "forward_kl"} {
		f := res.Fits[name]
		if f == nil {
			t.Errorf("fit %s missing", name)
			continue
		}
		if math.Abs(f.Mean[0]) > 1e-6 || math.Abs(f.Cov[0][0]-1) > 1e-6 {
			t.Errorf("fit %s: mean %v cov %v, want 0 and 1", name, f.Mean, f.Cov)
		}
		if f.KLqp == nil || *f.KLqp > 1e-6 || f.KLpq == nil || *f.KLpq > 1e-6 {
			t.Errorf("fit %s: KL %v %v, want ~0", name, f.KLqp, f.KLpq)
		}
	}
	if res.Timing.Total <= 0 {
		t.Errorf("timing_ms.total %v, want > 0", res.Timing.Total)
	}
}

// The column heads are the methods' labels (engine.Method.Label).
func TestFitTableMentionsEveryFit(t *testing.T) {
	code, stdout, stderr := runCLI(t, "-(x-1)^2/2 - (y+2)^2/8 + (x-1)*(y+2)/8\n", "fit", "-")
	if code != exitOK {
		t.Fatalf("exit %d; stderr %q", code, stderr)
	}
	for _, want := range []string{"exact", "Laplace", "reverse KL", "mean-field", "forward KL", "mean x", "corr x,y", "KL(q||p)"} {
		if !strings.Contains(stdout, want) {
			t.Errorf("table lacks %q:\n%s", want, stdout)
		}
	}
}

// costlyModel is a 3-parameter Student-t likelihood over n observations
// (invented data: the digits 0 to 9 in turn), whose density costs about n
// evaluations of a logarithm a point.
func costlyModel(n int) string {
	var b strings.Builder
	b.WriteString("y = [")
	for i := range n {
		if i > 0 {
			b.WriteString(",")
		}
		b.WriteString(strconv.Itoa(i * 7 % 10))
	}
	b.WriteString("]\nparam a\nparam b\nparam s in [0, inf]\nsum(ld_student(y, 4, a + b, s)) - a^2/2 - b^2/2 - s\n")
	return b.String()
}

// TestFitRefusesWorkBeyondMaxTime: an analysis forecast to take longer than
// --max-time is refused at once, with the forecast and the cheaper plans.
func TestFitRefusesWorkBeyondMaxTime(t *testing.T) {
	code, stdout, stderr := runCLI(t, costlyModel(2000), "fit", "--max-time", "1ms", "-")
	if code != exitModel || stdout != "" {
		t.Fatalf("exit %d, stdout %q; want exit 1 and no result", code, stdout)
	}
	for _, want := range []string{"the analysis would take about", "grid points at", "more than --max-time 1ms", "Allow it with --max-time"} {
		if !strings.Contains(stderr, want) {
			t.Errorf("stderr %q lacks %q", stderr, want)
		}
	}
	// Without a bound the same command would run: the refusal is the
	// bound's, not the model's (checked on a cheap model to keep it short).
	if code, _, stderr := runCLI(t, "-x^2/2\n", "fit", "--max-time", "0", "-"); code != exitOK {
		t.Errorf("--max-time 0: exit %d, %q", code, stderr)
	}
}

// TestTooLongOffersCoarserGrid: the message names a --points that the
// forecast puts within the bound (Estimate.PointsWithin), or says that none
// does.
func TestTooLongOffersCoarserGrid(t *testing.T) {
	est := engine.Estimate{Dim: 2, Points: 301 * 301, PerPoint: 10 * time.Microsecond, PerDeriv: 100 * time.Microsecond, Total: 2 * time.Second}
	msg := tooLong("m.txt", est, time.Second)
	n := est.PointsWithin(time.Second)
	if n < 11 || n >= 301 || !strings.Contains(msg, "--points "+strconv.Itoa(n)) {
		t.Errorf("PointsWithin %d; message %q", n, msg)
	}
	msg = tooLong("m.txt", engine.Estimate{Dim: 4, Points: 41 * 41 * 41 * 41, PerPoint: time.Millisecond, Total: time.Hour}, time.Second)
	if !strings.Contains(msg, "even the coarsest grid") {
		t.Errorf("message %q", msg)
	}
}

// blockingReader never delivers (a terminal nobody types into).
type blockingReader struct{ stop chan struct{} }

func (r blockingReader) Read([]byte) (int, error) { <-r.stop; return 0, io.EOF }

// endlessReader delivers forever (yes | bellcheck fit -).
type endlessReader struct{}

func (endlessReader) Read(p []byte) (int, error) {
	for i := range p {
		p[i] = '1'
	}
	return len(p), nil
}

// TestReadNeverBlocksForever: standard input that never delivers, a named
// pipe nobody writes to and endless input each end with a message.
func TestReadNeverBlocksForever(t *testing.T) {
	stop := make(chan struct{})
	defer close(stop)
	var out, errOut bytes.Buffer
	code := run([]string{"fit", "--read-timeout", "300ms", "-"}, blockingReader{stop}, &out, &errOut)
	if code != exitModel || !strings.Contains(errOut.String(), "no model arrived on standard input within 300ms") {
		t.Errorf("silent stdin: exit %d, stderr %q", code, errOut.String())
	}
	fifo := filepath.Join(t.TempDir(), "pipe")
	if err := syscall.Mkfifo(fifo, 0o600); err != nil {
		t.Skip("no named pipes here:", err)
	}
	code, _, stderr := runCLI(t, "", "fit", "--read-timeout", "300ms", fifo)
	if code != exitModel || !strings.Contains(stderr, "no model arrived on "+fifo) {
		t.Errorf("named pipe: exit %d, stderr %q", code, stderr)
	}
	out.Reset()
	errOut.Reset()
	code = run([]string{"fit", "-"}, endlessReader{}, &out, &errOut)
	if code != exitModel || !strings.Contains(errOut.String(), "model text is too long") {
		t.Errorf("endless stdin: exit %d, stderr %.200q", code, errOut.String())
	}
}

// TestMessagesShowInvisibleCharacters: a right-to-left override (U+202E)
// in the text or in the file name is shown as <U+202E>, never echoed raw,
// and the caret still points at the error.
func TestMessagesShowInvisibleCharacters(t *testing.T) {
	src := "x = 1 # \u202e reversed\n-x^2 + lgama(x)\n"
	code, _, stderr := runCLI(t, src, "fit", "-")
	if code != exitModel || strings.ContainsRune(stderr, '\u202e') || !strings.Contains(stderr, "<U+202E>") {
		t.Errorf("exit %d, stderr %q", code, stderr)
	}
	// The first error is the override itself (a model error, at 1:9).
	if !strings.Contains(stderr, "-:1:9: bidirectional control character U+202E") {
		t.Errorf("stderr %q", stderr)
	}
	name := filepath.Join(t.TempDir(), "evil\u202etxt.model")
	if err := os.WriteFile(name, []byte("-x^2 + lgama(x)\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	_, _, stderr = runCLI(t, "", "fit", name)
	if strings.ContainsRune(stderr, '\u202e') || !strings.Contains(stderr, "evil<U+202E>txt") {
		t.Errorf("file name echoed raw: %q", stderr)
	}
	// A zero-width space (U+200B) outside a comment is an error at its own
	// column; the caret points at the start of the shown <U+200B>.
	_, _, stderr = runCLI(t, "-x^2 +\u200b lgama(x)\n", "fit", "-")
	lines := strings.Split(stderr, "\n")
	if len(lines) < 3 {
		t.Fatalf("stderr %q", stderr)
	}
	shown, caret := lines[1], lines[2]
	if i := strings.Index(caret, "^"); i < 0 || !strings.HasPrefix(shown[i:], "<U+200B> lgama") || !strings.Contains(lines[0], "-:1:7:") {
		t.Errorf("caret misplaced:\n%s\n%s", shown, caret)
	}
}

// TestProgressReporter: nothing in the first progressAfter, then a line
// with the stage, the share done and the time left (spent/fraction - spent:
// 10 s at 25 % leaves 30 s), at most every progressEvery.
func TestProgressReporter(t *testing.T) {
	var buf bytes.Buffer
	report := progressReporter(&buf, engine.Estimate{}, time.Now())
	report(engine.Progress{Stage: "grid", Fraction: 0.1})
	if buf.Len() != 0 {
		t.Fatalf("a report before %v: %q", progressAfter, buf.String())
	}
	report = progressReporter(&buf, engine.Estimate{}, time.Now().Add(-10*time.Second))
	report(engine.Progress{Stage: "reverse_kl", Fraction: 0.25})
	report(engine.Progress{Stage: "reverse_kl", Fraction: 0.26}) // too soon for another line
	if got := buf.String(); got != "bellcheck:  25% reverse kl, 10s, about 30s left\n" {
		t.Errorf("progress %q", got)
	}
}
