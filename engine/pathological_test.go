package engine

import (
	"bufio"
	"context"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"bellcheck/engine/model"
)

// The pathological catalogue: densities that break naive numerics, one
// model file per case in testdata/pathological, each with its expectations
// in comment lines that start with "#:" (the format is described in
// testdata/pathological/README.md). Every case is parsed by model.Parse and
// analysed by Analyse; the result must pass the honesty checks and the
// case's own expectations: the diagnostics it must and must not carry, the
// quantities that must be absent (and the diagnostic that says why), those
// that must be present, and values that are known in closed form.

const pathoDir = "../testdata/pathological"

// coveredSlack is the factor by which an error estimate may understate the
// actual error in a "covered" check.
const coveredSlack = 2

// pathoCase is one model of the catalogue with its expectations.
type pathoCase struct {
	name   string
	src    string
	opts   Options
	checks []pathoCheck
	// wantErr, when set, is a phrase that Analyse's error must contain.
	wantErr string
}

type pathoCheck struct {
	line  int
	kind  string   // "want", "forbid", "absent", "present", "near", "covered"
	args  []string // codes or paths; for "covered", the value's path and its error's
	since []string // for "absent": the codes that give the reason
	value float64  // for "near"
	tol   float64
}

func loadPathological(t testing.TB) []pathoCase {
	files, err := filepath.Glob(filepath.Join(pathoDir, "*.txt"))
	if err != nil || len(files) == 0 {
		t.Fatalf("no pathological cases in %s: %v", pathoDir, err)
	}
	var cases []pathoCase
	for _, f := range files {
		c, err := readPathoCase(f)
		if err != nil {
			t.Fatal(err)
		}
		cases = append(cases, c)
	}
	return cases
}

func readPathoCase(file string) (pathoCase, error) {
	raw, err := os.ReadFile(file)
	if err != nil {
		return pathoCase{}, err
	}
	c := pathoCase{name: strings.TrimSuffix(filepath.Base(file), ".txt"), src: string(raw)}
	// Parameter names in order of the param statements, for "option".
	m, perr := model.Parse(c.src)
	sc := bufio.NewScanner(strings.NewReader(c.src))
	sc.Buffer(make([]byte, 0, 1<<16), model.MaxSource+1)
	for ln := 1; sc.Scan(); ln++ {
		text, ok := strings.CutPrefix(strings.TrimSpace(sc.Text()), "#:")
		if !ok {
			continue
		}
		where := fmt.Sprintf("%s:%d", file, ln)
		if i := strings.Index(text, "#"); i >= 0 {
			text = text[:i] // a comment naming the source
		}
		fields := strings.Fields(text)
		if len(fields) == 0 {
			return c, fmt.Errorf("%s: empty directive", where)
		}
		ck := pathoCheck{line: ln, kind: fields[0], args: fields[1:]}
		switch ck.kind {
		case "option":
			if perr != nil {
				return c, fmt.Errorf("%s: option in a model that does not parse: %v", where, perr)
			}
			if err := applyOption(&c.opts, m, fields[1:]); err != nil {
				return c, fmt.Errorf("%s: %v", where, err)
			}
			continue
		case "error":
			c.wantErr = strings.Join(fields[1:], " ")
			continue
		case "want", "forbid", "present":
			if len(ck.args) == 0 {
				return c, fmt.Errorf("%s: %s needs at least one word", where, ck.kind)
			}
		case "absent":
			// absent PATH... because CODE...
			i := indexOf(ck.args, "because")
			if i < 1 || i == len(ck.args)-1 {
				return c, fmt.Errorf("%s: want absent PATH... because CODE...", where)
			}
			ck.args, ck.since = ck.args[:i], ck.args[i+1:]
		case "near":
			if len(ck.args) != 3 {
				return c, fmt.Errorf("%s: want near PATH VALUE TOLERANCE", where)
			}
			v, err1 := strconv.ParseFloat(ck.args[1], 64)
			tol, err2 := strconv.ParseFloat(ck.args[2], 64)
			if err1 != nil || err2 != nil || !(tol >= 0) {
				return c, fmt.Errorf("%s: bad number in %q", where, text)
			}
			ck.args, ck.value, ck.tol = ck.args[:1], v, tol
		case "covered":
			if len(ck.args) != 3 {
				return c, fmt.Errorf("%s: want covered PATH VALUE ERROR_PATH", where)
			}
			v, err := strconv.ParseFloat(ck.args[1], 64)
			if err != nil {
				return c, fmt.Errorf("%s: bad number in %q", where, text)
			}
			ck.args, ck.value = []string{ck.args[0], ck.args[2]}, v
		default:
			return c, fmt.Errorf("%s: unknown directive %q", where, ck.kind)
		}
		c.checks = append(c.checks, ck)
	}
	if len(c.checks) == 0 && c.wantErr == "" {
		return c, fmt.Errorf("%s: no expectations", file)
	}
	return c, sc.Err()
}

// applyOption reads "NAME key=value..." into opts.
func applyOption(opts *Options, m *model.Model, args []string) error {
	if len(args) < 2 {
		return fmt.Errorf("want option NAME key=value...")
	}
	idx := -1
	for i, p := range m.Params {
		if p.Name == args[0] {
			idx = i
		}
	}
	if idx < 0 {
		return fmt.Errorf("no parameter %s", args[0])
	}
	for len(opts.Params) <= idx {
		opts.Params = append(opts.Params, ParamOptions{})
	}
	po := &opts.Params[idx]
	for _, kv := range args[1:] {
		k, v, ok := strings.Cut(kv, "=")
		if !ok {
			return fmt.Errorf("want key=value, not %q", kv)
		}
		switch k {
		case "scale":
			po.Scale = Scale(v)
		case "points":
			n, err := strconv.Atoi(v)
			if err != nil {
				return err
			}
			po.Points = n
		case "lo", "hi":
			x, err := strconv.ParseFloat(v, 64)
			if err != nil {
				return err
			}
			if k == "lo" {
				po.Lo = &x
			} else {
				po.Hi = &x
			}
		default:
			return fmt.Errorf("unknown option %q", k)
		}
	}
	return nil
}

func indexOf(s []string, w string) int {
	for i, x := range s {
		if x == w {
			return i
		}
	}
	return -1
}

func TestPathological(t *testing.T) {
	cases := loadPathological(t)
	if len(cases) < 30 {
		t.Errorf("the catalogue has %d cases, want at least 30", len(cases))
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			m, err := model.Parse(c.src)
			if err != nil {
				t.Fatalf("parse: %v", err)
			}
			res, av, err := analyseRecorded(context.Background(), m, c.opts)
			if c.wantErr != "" {
				if err == nil || !strings.Contains(err.Error(), c.wantErr) {
					t.Fatalf("error %v, want one saying %q", err, c.wantErr)
				}
				return
			}
			if err != nil {
				t.Fatalf("analyse: %v", err)
			}
			for _, s := range honesty(res, len(m.Params)) {
				t.Error(s)
			}
			for _, s := range recordHonesty(res, av) {
				t.Error(s)
			}
			checkPatho(t, c, res)
		})
	}
}

func checkPatho(t *testing.T, c pathoCase, res *Result) {
	doc, codes := resultDoc(t, res)
	for _, ck := range c.checks {
		where := fmt.Sprintf("%s.txt:%d", c.name, ck.line)
		switch ck.kind {
		case "want":
			for _, code := range ck.args {
				if !codes[code] {
					t.Errorf("%s: no %s diagnostic; have %s", where, code, codeList(res))
				}
			}
		case "forbid":
			for _, code := range ck.args {
				if codes[code] {
					t.Errorf("%s: unwanted %s diagnostic: %s", where, code, diagText(res, code))
				}
			}
		case "absent":
			for _, p := range ck.args {
				if v, ok := jsonAt(doc, p); ok && !allNull(v) {
					t.Errorf("%s: %s is %v, want it absent", where, p, v)
				}
			}
			found := false
			for _, code := range ck.since {
				found = found || codes[code]
			}
			if !found {
				t.Errorf("%s: no reason for the absence of %v: want one of %v, have %s", where, ck.args, ck.since, codeList(res))
			}
		case "present":
			for _, p := range ck.args {
				if v, ok := jsonAt(doc, p); !ok || !present(v) {
					t.Errorf("%s: %s is %v, want it present", where, p, v)
				}
			}
		case "near":
			v, ok := jsonAt(doc, ck.args[0])
			f, isNum := v.(float64)
			if !ok || !isNum {
				t.Errorf("%s: %s is %v, want %.10g", where, ck.args[0], v, ck.value)
			} else if math.Abs(f-ck.value) > ck.tol {
				t.Errorf("%s: %s = %.12g, want %.12g ± %g", where, ck.args[0], f, ck.value, ck.tol)
			}
		case "covered":
			// The reported error estimate must cover the actual error (up
			// to a factor coveredSlack): an estimate that understates it
			// misleads as much as a wrong value.
			v, ok1 := jsonAt(doc, ck.args[0])
			e, ok2 := jsonAt(doc, ck.args[1])
			f, isNum := v.(float64)
			fe, isErr := e.(float64)
			switch {
			case !ok1 || !ok2 || !isNum || !isErr:
				t.Errorf("%s: %s is %v with error %s = %v, want numbers", where, ck.args[0], v, ck.args[1], e)
			case math.Abs(f-ck.value) > coveredSlack*fe+1e-12:
				t.Errorf("%s: %s = %.12g is off by %.3g from %.12g, but its error estimate %s is %.3g", where, ck.args[0], f, f-ck.value, ck.value, ck.args[1], fe)
			}
		}
	}
	if t.Failed() {
		for _, d := range res.Diagnostics {
			t.Logf("  %s (%s): %s", d.Code, d.Severity, d.Message)
		}
	}
}

func diagText(res *Result, code string) string {
	for _, d := range res.Diagnostics {
		if d.Code == code {
			return d.Message
		}
	}
	return ""
}
