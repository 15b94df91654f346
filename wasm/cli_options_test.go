//go:build !(js && wasm)

package main

import (
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"bellcheck/app/ui"
)

// The data and the model of the parity tests: a normal sample with unknown
// mean m and sd s (invented numbers).
const (
	parityData   = "y\tw\n1.2\t1\n0.4\t2\n2.9\t1\n1.7\t0.5\n0.8\t1\n2.2\t1\n"
	parityVector = "y = [1.2, 0.4, 2.9, 1.7, 0.8, 2.2]\n"
	parityModel  = "param s in [0, inf]\nsum(ld_normal(y, m, s)) + ld_normal(m, 0, 10) + ld_gamma(s, 2, 1)\n"
	parityLines  = "#@ scale s=log\n#@ points s=151 m=151\n#@ box m=-2:4\n"
)

var parityFlags = []string{"--scale", "s=log", "--points", "s=151,m=151", "--box", "m=-2:4"}

// resultJSON returns a result's JSON without its timings (which differ from
// run to run), in one canonical form.
func resultJSON(t *testing.T, text string) string {
	t.Helper()
	var v map[string]any
	if err := json.Unmarshal([]byte(text), &v); err != nil {
		t.Fatalf("not JSON: %v\n%s", err, text)
	}
	if _, ok := v["timing_ms"]; !ok {
		t.Fatalf("no timing_ms in %s", text)
	}
	delete(v, "timing_ms")
	out, err := json.Marshal(v)
	if err != nil {
		t.Fatal(err)
	}
	return string(out)
}

func writeFile(t *testing.T, dir, name, text string) string {
	t.Helper()
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func fitJSON(t *testing.T, args ...string) string {
	t.Helper()
	code, stdout, stderr := runCLI(t, "", append([]string{"fit", "--json"}, args...)...)
	if code != exitOK {
		t.Fatalf("bellcheck fit %v: exit %d; stderr %s", args, code, stderr)
	}
	return resultJSON(t, stdout)
}

// TestOptionsFlagsFileAndPageAgree runs one analysis with options and data
// given four ways: a self-contained model file (setting lines, the data as a
// vector in the text); the bare model with --data and flags; the model's
// setting lines with --data; and the page's JavaScript API
// (window.bellcheck.analyse, ui.APIAnalyse) with the same options by index.
// All four JSON results must be identical (but for the timings): the
// options and the data reach the engine unchanged on every path.
func TestOptionsFlagsFileAndPageAgree(t *testing.T) {
	dir := t.TempDir()
	data := writeFile(t, dir, "sample.tsv", parityData)
	self := writeFile(t, dir, "self.txt", parityLines+parityVector+parityModel)
	bare := writeFile(t, dir, "bare.txt", parityModel)
	lines := writeFile(t, dir, "lines.txt", parityLines+parityModel)

	selfContained := fitJSON(t, self)
	byFlags := fitJSON(t, append(append([]string{"--data", data}, parityFlags...), bare)...)
	byLines := fitJSON(t, "--data", data, lines)
	if byFlags != selfContained {
		t.Errorf("--data and flags differ from the self-contained file:\n%s\n%s", byFlags, selfContained)
	}
	if byLines != selfContained {
		t.Errorf("--data and setting lines differ from the self-contained file:\n%s\n%s", byLines, selfContained)
	}

	// The page's API: parameters by index, s declared first, then m.
	src, _ := json.Marshal(parityVector + parityModel)
	opts := `{"params": [{"scale": "log", "points": 151}, {"points": 151, "lo": -2, "hi": 4}]}`
	page, err := ui.APIAnalyse([]string{string(src), opts})
	if err != nil {
		t.Fatal(err)
	}
	if got := resultJSON(t, page); got != selfContained {
		t.Errorf("the page's API differs from the command line:\n%s\n%s", got, selfContained)
	}

	// The options did reach the engine: 151 points, the box's m range, s on
	// the log scale.
	var res struct {
		Params []string `json:"params"`
		Grid   struct {
			Points []int     `json:"points"`
			Lo     []float64 `json:"lo"`
			Hi     []float64 `json:"hi"`
		} `json:"grid"`
		Scales []string `json:"scales"`
	}
	if err := json.Unmarshal([]byte(selfContained), &res); err != nil {
		t.Fatal(err)
	}
	if fmt.Sprint(res.Params) != "[s m]" || fmt.Sprint(res.Grid.Points) != "[151 151]" {
		t.Errorf("params %v points %v, want [s m] and [151 151]", res.Params, res.Grid.Points)
	}
	if !strings.Contains(selfContained, `"log"`) {
		t.Errorf("no log scale in the result: %s", selfContained)
	}
}

// TestDataBeyondTextLimit attaches a column far larger than the 64 KiB the
// model text may hold and checks the posterior of a normal mean with known
// sd 1 and a flat prior, which is N(mean(y), 1/n) (conjugate closed form).
func TestDataBeyondTextLimit(t *testing.T) {
	const n = 12000
	var b strings.Builder
	b.WriteString("obs\n")
	sum := 0.0
	for i := 0; i < n; i++ {
		v := 3 + math.Sin(float64(i))*1.5 // invented, deterministic
		s := fmt.Sprintf("%.6f", v)
		fmt.Sscan(s, &v)
		sum += v
		b.WriteString(s + "\n")
	}
	if b.Len() <= 64<<10 {
		t.Fatalf("the data file is only %d bytes", b.Len())
	}
	dir := t.TempDir()
	data := writeFile(t, dir, "obs.csv", b.String())
	mdl := writeFile(t, dir, "m.txt", "-sum((obs - m)^2)/2\n")
	var res struct {
		Exact struct {
			Mean []float64   `json:"mean"`
			Cov  [][]float64 `json:"cov"`
		} `json:"exact"`
	}
	if err := json.Unmarshal([]byte(fitJSON(t, "--data", data, mdl)), &res); err != nil {
		t.Fatal(err)
	}
	mean, variance := sum/n, 1.0/n
	if math.Abs(res.Exact.Mean[0]-mean) > 1e-6 || math.Abs(res.Exact.Cov[0][0]/variance-1) > 1e-4 {
		t.Errorf("exact mean %v var %v, want %v and %v", res.Exact.Mean[0], res.Exact.Cov[0][0], mean, variance)
	}
}

// TestDataAndOptionErrors checks the exit status and the place named for
// each kind of mistake.
func TestDataAndOptionErrors(t *testing.T) {
	dir := t.TempDir()
	good := writeFile(t, dir, "good.tsv", parityData)
	bad := writeFile(t, dir, "bad.csv", "y,w\n1,2\n3,NA\n")
	mdl := writeFile(t, dir, "m.txt", parityModel)
	clash := writeFile(t, dir, "clash.txt", "w = 2\n"+parityModel)
	badLine := writeFile(t, dir, "badline.txt", parityModel+"#@ scale m=log\n")
	for _, tc := range []struct {
		stdin string
		args  []string
		code  int
		want  string
	}{
		{"", []string{"--data", bad, mdl}, exitModel, "bad.csv:3:3: missing value \"NA\" in column w"},
		{"", []string{"--data", filepath.Join(dir, "none.csv"), mdl}, exitModel, "none.csv"},
		{"", []string{"--data", dir, mdl}, exitModel, "not a regular file"},
		{"x\n1\n", []string{"--data", "-", "-"}, exitUsage, "cannot share"},
		{"", []string{"--data", good, "--data", good, mdl}, exitModel, "good.tsv:1:1: column y is also in " + good},
		{"", []string{"--data", good, clash}, exitModel, "clash.txt:1:1: w is a column of the attached data"},
		{"", []string{"--data", good, badLine}, exitModel, "badline.txt:3:10: m=log: the log scale needs"},
		{"", []string{"--data", good, "--points", "q=101", mdl}, exitUsage, "--points: q=101: the model has no parameter q (its parameters: s, m)"},
		{"", []string{"--data", good, "--box", "s=-1:1", mdl}, exitUsage, "the box's lower side -1 is outside s's support"},
		{"", []string{"--scale", "s:log", mdl}, exitUsage, "want NAME=log"},
	} {
		code, _, stderr := runCLI(t, tc.stdin, append([]string{"fit"}, tc.args...)...)
		if code != tc.code || !strings.Contains(stderr, tc.want) {
			t.Errorf("fit %v: exit %d, stderr %q; want exit %d and %q", tc.args, code, stderr, tc.code, tc.want)
		}
	}
}

// TestSeveralDataFiles attaches two files, one column each.
func TestSeveralDataFiles(t *testing.T) {
	dir := t.TempDir()
	y := writeFile(t, dir, "y.csv", "y\n1.2\n0.4\n2.9\n1.7\n0.8\n2.2\n")
	w := writeFile(t, dir, "w.csv", "w\n1\n2\n1\n0.5\n1\n1\n")
	mdl := writeFile(t, dir, "m.txt", parityLines+parityModel)
	self := writeFile(t, dir, "self.txt", parityLines+parityVector+parityModel)
	if got, want := fitJSON(t, "--data", y, "--data", w, mdl), fitJSON(t, self); got != want {
		t.Errorf("two data files differ from the self-contained file")
	}
}

// TestRaggedDataNoted: columns of different lengths are read, with a note.
func TestRaggedDataNoted(t *testing.T) {
	dir := t.TempDir()
	d := writeFile(t, dir, "r.csv", "a,b\n1,2\n3,\n")
	mdl := writeFile(t, dir, "m.txt", "-sum((a - m)^2) - sum((b - m)^2)\n")
	code, _, stderr := runCLI(t, "", "fit", "--json", "--data", d, mdl)
	if code != exitOK || !strings.Contains(stderr, "r.csv: the columns differ in length (a 2, b 1)") {
		t.Errorf("exit %d, stderr %q", code, stderr)
	}
}

// TestDataTotalLimit: several files may not together exceed the total
// limit on attached values (model.MaxDataValues, 400000).
func TestDataTotalLimit(t *testing.T) {
	dir := t.TempDir()
	args := []string{"fit"}
	for i := 0; i < 5; i++ {
		name := fmt.Sprintf("c%d", i)
		args = append(args, "--data", writeFile(t, dir, name+".csv", name+"\n"+strings.Repeat("1\n", 100000)))
	}
	args = append(args, writeFile(t, dir, "m.txt", "-m^2 + sum(c0)\n"))
	code, _, stderr := runCLI(t, "", args...)
	if code != exitModel || !strings.Contains(stderr, "--data: model: bad data: more than 400000 values in all") {
		t.Errorf("exit %d, stderr %q", code, stderr)
	}
}

// TestDataFromStandardInput reads the data from standard input with the
// model in a file.
func TestDataFromStandardInput(t *testing.T) {
	dir := t.TempDir()
	mdl := writeFile(t, dir, "m.txt", parityLines+parityModel)
	code, stdout, stderr := runCLI(t, parityData, "fit", "--json", "--data", "-", mdl)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	self := writeFile(t, dir, "self.txt", parityLines+parityVector+parityModel)
	if got, want := resultJSON(t, stdout), fitJSON(t, self); got != want {
		t.Errorf("data from standard input differ from the self-contained file")
	}
}
