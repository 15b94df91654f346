//go:build !(js && wasm)

package main

import (
	"bytes"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
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
