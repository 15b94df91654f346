package engine

import (
	"bufio"
	"context"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"bellcheck/engine/model"
)

// The reference tests run every model in testdata/reference through
// model.Parse and Analyse and check the result against the values in the
// model's .expect file, each with its tolerance and, beside it, its source
// (closed forms, handbook tables, published test targets).

const refDir = "../testdata/reference"

type refCase struct {
	name  string
	src   string
	opts  Options
	lines []expectLine
}

type expectLine struct {
	kind  string // "value", "absent", "diagnostic", "no_diagnostic"
	path  string
	value float64
	tol   float64
	line  int
}

func loadReferences(t testing.TB) []refCase { return loadReferencesIn(t, refDir) }

// loadReferencesIn reads the reference cases of dir.
func loadReferencesIn(t testing.TB, refDir string) []refCase {
	files, err := filepath.Glob(filepath.Join(refDir, "*.expect"))
	if err != nil || len(files) == 0 {
		t.Fatalf("no reference files: %v", err)
	}
	var cases []refCase
	for _, f := range files {
		name := strings.TrimSuffix(filepath.Base(f), ".expect")
		src, err := os.ReadFile(filepath.Join(refDir, name+".txt"))
		if err != nil {
			t.Fatal(err)
		}
		c := refCase{name: name, src: string(src)}
		fh, err := os.Open(f)
		if err != nil {
			t.Fatal(err)
		}
		sc := bufio.NewScanner(fh)
		for ln := 1; sc.Scan(); ln++ {
			text := sc.Text()
			if i := strings.Index(text, "#"); i >= 0 {
				text = text[:i]
			}
			fields := strings.Fields(text)
			if len(fields) == 0 {
				continue
			}
			switch fields[0] {
			case "option":
				// option INDEX scale SCALE
				if len(fields) != 4 || fields[2] != "scale" {
					t.Fatalf("%s:%d: bad option line", f, ln)
				}
				i, _ := strconv.Atoi(fields[1])
				for len(c.opts.Params) <= i {
					c.opts.Params = append(c.opts.Params, ParamOptions{})
				}
				c.opts.Params[i].Scale = Scale(fields[3])
			case "absent", "diagnostic", "no_diagnostic":
				if len(fields) != 2 {
					t.Fatalf("%s:%d: want %s and one word", f, ln, fields[0])
				}
				c.lines = append(c.lines, expectLine{kind: fields[0], path: fields[1], line: ln})
			default:
				if len(fields) != 3 {
					t.Fatalf("%s:%d: want path, value, tolerance", f, ln)
				}
				v, err1 := strconv.ParseFloat(fields[1], 64)
				tol, err2 := strconv.ParseFloat(fields[2], 64)
				if err1 != nil || err2 != nil {
					t.Fatalf("%s:%d: bad number", f, ln)
				}
				c.lines = append(c.lines, expectLine{kind: "value", path: fields[0], value: v, tol: tol, line: ln})
			}
		}
		fh.Close()
		cases = append(cases, c)
	}
	return cases
}

func analyseSource(t testing.TB, src string, opts Options) *Result {
	m, err := model.Parse(src)
	if err != nil {
		t.Fatalf("parse: %v", err)
	}
	res, err := Analyse(context.Background(), m, opts, nil)
	if err != nil {
		t.Fatalf("analyse: %v", err)
	}
	return res
}

// lookup walks a JSON path such as "fits.laplace.cov.0.1"; the fit names
// may stand without "fits.".
func lookup(doc any, path string) (any, bool) {
	parts := strings.Split(path, ".")
	if _, ok := MethodOf(parts[0]); ok {
		parts = append([]string{"fits"}, parts...)
	}
	return jsonAt(doc, strings.Join(parts, "."))
}

func TestReferences(t *testing.T) { runReferences(t, refDir) }

// logZValueAccuracy is the accuracy of the reference cases' log Z values
// (closed forms written to 16 digits, or independent quadratures of ours
// to 1e-10 or better) that the check of the error estimate allows.
const logZValueAccuracy = 1e-10

// maxPessimism is how many times its actual error an error estimate of log
// Z may be, where that error is above logZValueAccuracy.
const maxPessimism = 100.0

// runReferences checks every reference case of dir.
func runReferences(t *testing.T, dir string) {
	for _, c := range loadReferencesIn(t, dir) {
		t.Run(c.name, func(t *testing.T) {
			res := analyseSource(t, c.src, c.opts)
			doc, codes := resultDoc(t, res)
			for _, l := range c.lines {
				where := c.name + ".expect:" + strconv.Itoa(l.line)
				switch l.kind {
				case "diagnostic":
					if !codes[l.path] {
						t.Errorf("%s: no %s diagnostic (have %v)", where, l.path, res.Diagnostics)
					}
				case "no_diagnostic":
					if codes[l.path] {
						t.Errorf("%s: unexpected %s diagnostic", where, l.path)
					}
				case "absent":
					if v, ok := lookup(doc, l.path); ok && v != nil {
						t.Errorf("%s: %s is %v, want null", where, l.path, v)
					}
				default:
					v, ok := lookup(doc, l.path)
					f, isNum := v.(float64)
					if !ok || !isNum {
						t.Errorf("%s: %s is %v, want %.10g", where, l.path, v, l.value)
						continue
					}
					if math.Abs(f-l.value) > l.tol {
						t.Errorf("%s: %s = %.12g, want %.12g ± %g (off by %.3g)", where, l.path, f, l.value, l.tol, f-l.value)
					}
					if l.path == "exact.log_z" && math.Abs(f-l.value) > coveredSlack*res.Exact.LogZErr+logZValueAccuracy {
						t.Errorf("%s: %s is off by %.3g from %.12g, but its error estimate is %.3g", where, l.path, f-l.value, l.value, res.Exact.LogZErr)
					}
					// Nor far too pessimistic, where the error stands above
					// the reference value's own accuracy (below it the
					// error is not known well enough to judge).
					if e := math.Abs(f - l.value); l.path == "exact.log_z" && e > logZValueAccuracy && res.Exact.LogZErr > maxPessimism*e {
						t.Errorf("%s: %s's error estimate %.3g is over %g times its error %.3g", where, l.path, res.Exact.LogZErr, maxPessimism, e)
					}
				}
			}
		})
	}
}

// Identities that hold for every density: the ELBO is a lower bound on log
// Z; among the three fits the reverse-KL one has the least KL(q||p) and the
// forward-KL one the least KL(p||q) (each is the minimiser of its own
// divergence; DESIGN.md, Methods). The tolerance allows the grid's and the
// cubatures' errors.
func TestIdentities(t *testing.T) {
	for _, c := range loadReferences(t) {
		t.Run(c.name, func(t *testing.T) {
			res := analyseSource(t, c.src, c.opts)
			f := res.Fits
			tol := 1e-6 + 10*res.Exact.LogZErr
			for _, v := range []*Fit{f[ReverseKL], f[MeanField]} {
				if v != nil && v.ELBO != nil && *v.ELBO > res.Exact.LogZ+tol {
					t.Errorf("ELBO %.10g above log Z %.10g", *v.ELBO, res.Exact.LogZ)
				}
			}
			fits := []*Fit{f[Laplace], f[ReverseKL], f[ForwardKL]}
			if r := f[ReverseKL]; r != nil && r.Converged && !math.IsInf(r.KLqp, 0) {
				for _, o := range fits {
					if o != nil && r.KLqp > o.KLqp+1e-6 {
						t.Errorf("reverse-KL fit's KL(q||p) %.10g above another fit's %.10g", r.KLqp, o.KLqp)
					}
				}
			}
			if fw := f[ForwardKL]; fw != nil && !math.IsInf(fw.KLpq, 0) {
				for _, o := range fits {
					if o != nil && fw.KLpq > o.KLpq+1e-6 {
						t.Errorf("forward-KL fit's KL(p||q) %.10g above another fit's %.10g", fw.KLpq, o.KLpq)
					}
				}
			}
		})
	}
}
