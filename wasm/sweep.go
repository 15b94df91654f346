//go:build !(js && wasm)

package main

import (
	"context"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"os/signal"
	"strconv"
	"strings"
	"text/tabwriter"
	"time"

	"bellcheck/engine"
	"bellcheck/engine/model"
)

// defaultShow are the quantities a sweep prints when --show is not given.
const defaultShow = "exact.log_z,exact.mean.0,exact.sd.0,laplace.mean.0,laplace.sd.0,reverse_kl.kl_q_p"

// maxSweepSteps bounds a sweep's number of values.
const maxSweepSteps = 1000

// runSweep is the sweep command: analyse a model at evenly spaced values of
// one scalar constant (model.WithConstant) and print the chosen
// quantities, as a table or as JSON lines.
func runSweep(args []string, stdin io.Reader, stdout, stderr io.Writer) int {
	stderr = visibleWriter{stderr}
	fs := flag.NewFlagSet("sweep", flag.ContinueOnError)
	fs.SetOutput(stderr)
	asJSON := fs.Bool("json", false, "print one JSON object per value (JSON lines)")
	show := fs.String("show", defaultShow, "the quantities to print: comma-separated `PATHS` into the result's JSON (fit names may stand without fits.)")
	steps := fs.Int("steps", 11, "the number of evenly spaced values, ends included")
	over := fs.String("over", "", "the constant and its range: `NAME=LO:HI` (default: the one constant marked by --vary or a #@ vary line)")
	maxTime := fs.Duration("max-time", defaultMaxTime, "refuse a sweep forecast to take longer (one analysis's forecast times --steps), and stop one that does (0: no bound)")
	quiet := fs.Bool("quiet", false, "no progress reports on stderr")
	var in fitInputs
	in.define(fs)
	if err := fs.Parse(args); err != nil {
		return exitUsage
	}
	if fs.NArg() != 1 {
		fmt.Fprint(stderr, "bellcheck sweep: want one model file ('-' for standard input)\n"+usage)
		return exitUsage
	}
	if *maxTime < 0 {
		fmt.Fprint(stderr, "bellcheck sweep: --max-time must not be negative\n")
		return exitUsage
	}
	if *steps < 2 || *steps > maxSweepSteps {
		fmt.Fprintf(stderr, "bellcheck sweep: --steps %d: want 2 to %d values\n", *steps, maxSweepSteps)
		return exitUsage
	}
	paths := splitPaths(*show)
	if len(paths) == 0 {
		fmt.Fprint(stderr, "bellcheck sweep: --show: name at least one quantity, as in exact.log_z\n")
		return exitUsage
	}
	name := fs.Arg(0)
	src, err := readModel(name, stdin, defaultReadTimeout, stderr)
	if err != nil {
		fmt.Fprintf(stderr, "bellcheck: %v\n", err)
		return exitModel
	}
	m, opts, code := in.load(name, string(src), stdin, stderr)
	if code != exitOK {
		return code
	}
	v, code := sweepRange(*over, m, opts, stderr)
	if code != exitOK {
		return code
	}
	values := make([]float64, *steps)
	for i := range values {
		values[i] = v.Lo + (v.Hi-v.Lo)*float64(i)/float64(*steps-1)
	}
	values[*steps-1] = v.Hi
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt)
	defer stop()
	est, code := sweepForecast(ctx, name, m, opts, v.Name, values, *maxTime, stderr)
	if code != exitOK {
		return code
	}
	if *maxTime > 0 {
		var cancel context.CancelFunc
		ctx, cancel = context.WithTimeout(ctx, *maxTime)
		defer cancel()
	}
	var report engine.ProgressFunc
	if !*quiet {
		report = progressReporter(stderr, est, time.Now())
	}
	sw := sweep{file: name, m: m, opts: opts, name: v.Name, values: values, paths: paths, asJSON: *asJSON, maxTime: *maxTime, est: est, report: report}
	return sw.run(ctx, stdout, stderr)
}

// sweep is a sweep ready to run: the model, the constant and its values,
// the quantities to print, and the bound and forecast it runs under.
type sweep struct {
	file    string
	m       *model.Model
	opts    engine.Options
	name    string
	values  []float64
	paths   []string
	asJSON  bool
	maxTime time.Duration
	est     engine.Estimate
	report  engine.ProgressFunc
}

// run analyses the model at each value and prints a row (or a JSON line)
// per value; when ctx ends (--max-time, an interrupt) it stops with the
// rows done so far printed.
func (sw sweep) run(ctx context.Context, stdout, stderr io.Writer) int {
	tw := tabwriter.NewWriter(visibleWriter{stdout}, 0, 0, 2, ' ', tabwriter.AlignRight)
	if !sw.asJSON {
		row(tw, append([]string{sw.name}, sw.paths...)...)
	}
	status := exitOK
	for i, val := range sw.values {
		cells, err := sweepPoint(ctx, sw.m, sw.opts, sw.name, val, sw.paths, sweepProgress(sw.report, i, len(sw.values), sw.name, val))
		if ctx.Err() != nil {
			tw.Flush()
			if errors.Is(ctx.Err(), context.DeadlineExceeded) {
				fmt.Fprintf(stderr, "bellcheck sweep: %s: stopped after --max-time %v at %s = %s, %d of %d values done (the forecast was %v); allow more time with --max-time, use fewer values with --steps, or a coarser grid with --points\n",
					sw.file, sw.maxTime, sw.name, num(val), i, len(sw.values), sw.est)
				return exitModel
			}
			fmt.Fprintf(stderr, "bellcheck sweep: %v\n", ctx.Err())
			return exitModel
		}
		var unknown *unknownPathError
		if errors.As(err, &unknown) {
			fmt.Fprintf(stderr, "bellcheck sweep: --show: %v\n", err)
			return exitUsage
		}
		if err != nil {
			fmt.Fprintf(stderr, "bellcheck sweep: %s = %s: %v\n", sw.name, num(val), err)
			status = exitModel
		}
		if sw.asJSON {
			if err := writeSweepJSON(stdout, sw.name, val, sw.paths, cells, err); err != nil {
				fmt.Fprintf(stderr, "bellcheck: %v\n", err)
				return exitModel
			}
			continue
		}
		line := []string{strconv.FormatFloat(val, 'g', 6, 64)}
		for _, c := range cells {
			line = append(line, cellString(c))
		}
		row(tw, line...)
	}
	tw.Flush()
	return status
}

// sweepRange finds the constant to sweep and its range: --over, else the
// one constant marked to vary.
func sweepRange(over string, m *model.Model, opts engine.Options, stderr io.Writer) (engine.Vary, int) {
	if over != "" {
		n, r, ok := strings.Cut(over, "=")
		lo, hi, ok2 := strings.Cut(r, ":")
		l, errL := strconv.ParseFloat(strings.TrimSpace(lo), 64)
		h, errH := strconv.ParseFloat(strings.TrimSpace(hi), 64)
		if !ok || !ok2 || errL != nil || errH != nil || !finiteNum(l) || !finiteNum(h) || !(l < h) {
			fmt.Fprintf(stderr, "bellcheck sweep: --over %s: want NAME=LO:HI with finite LO < HI\n", over)
			return engine.Vary{}, exitUsage
		}
		n = strings.TrimSpace(n)
		if _, err := m.Constant(n); err != nil {
			fmt.Fprintf(stderr, "bellcheck sweep: --over %s: %s\n", over, strings.TrimPrefix(err.Error(), "model: "))
			return engine.Vary{}, exitUsage
		}
		return engine.Vary{Name: n, Lo: l, Hi: h}, exitOK
	}
	switch len(opts.Vary) {
	case 1:
		return opts.Vary[0], exitOK
	case 0:
		fmt.Fprint(stderr, "bellcheck sweep: no constant to sweep: give --over NAME=LO:HI, or mark one with --vary NAME=LO:HI or a #@ vary line\n")
	default:
		names := make([]string, len(opts.Vary))
		for i, v := range opts.Vary {
			names[i] = v.Name
		}
		fmt.Fprintf(stderr, "bellcheck sweep: several constants are marked to vary (%s); choose one with --over NAME=LO:HI\n", strings.Join(names, ", "))
	}
	return engine.Vary{}, exitUsage
}

func finiteNum(v float64) bool { return v == v && v-v == 0 }

// sweepPoint analyses the model with the constant set to val and returns
// the values at the paths (nil for a null).
func sweepPoint(ctx context.Context, m *model.Model, opts engine.Options, name string, val float64, paths []string, progress engine.ProgressFunc) ([]any, error) {
	cells := make([]any, len(paths))
	mv, err := model.WithConstant(m, name, val)
	if err != nil {
		return cells, err
	}
	res, err := engine.Analyse(ctx, mv, opts, progress)
	if err != nil {
		return cells, err
	}
	raw, err := json.Marshal(res)
	if err != nil {
		return cells, err
	}
	var doc any
	if err := json.Unmarshal(raw, &doc); err != nil {
		return cells, err
	}
	for i, p := range paths {
		v, err := jsonPath(doc, p)
		if err != nil {
			return cells, err
		}
		cells[i] = v
	}
	return cells, nil
}

// unknownPathError is a --show path that names nothing in the result.
type unknownPathError struct{ path, why string }

func (e *unknownPathError) Error() string { return e.path + ": " + e.why }

// jsonPath walks a path such as "exact.cov.0.1" or "laplace.mean.0" (a fit
// method's key may stand without "fits.") through a decoded result. A null
// on the way gives nil; a name or index the result does not have is an
// unknownPathError.
func jsonPath(doc any, path string) (any, error) {
	parts := strings.Split(path, ".")
	if root, ok := doc.(map[string]any); ok {
		if _, isMethod := engine.MethodOf(parts[0]); isMethod {
			if _, top := root[parts[0]]; !top {
				parts = append([]string{"fits"}, parts...)
			}
		}
	}
	cur := doc
	for i, p := range parts {
		switch c := cur.(type) {
		case nil:
			return nil, nil
		case map[string]any:
			v, ok := c[p]
			if !ok {
				return nil, &unknownPathError{path, fmt.Sprintf("no %s in %s", strconv.Quote(p), where(parts[:i]))}
			}
			cur = v
		case []any:
			k, err := strconv.Atoi(p)
			if err != nil || k < 0 || k >= len(c) {
				return nil, &unknownPathError{path, fmt.Sprintf("%s is not an index of %s (0 to %d)", strconv.Quote(p), where(parts[:i]), len(c)-1)}
			}
			cur = c[k]
		default:
			return nil, &unknownPathError{path, fmt.Sprintf("%s is a number, with nothing inside", where(parts[:i]))}
		}
	}
	return cur, nil
}

func where(parts []string) string {
	if len(parts) == 0 {
		return "the result"
	}
	return strings.Join(parts, ".")
}

// splitPaths splits a comma-separated list, dropping blanks.
func splitPaths(s string) []string {
	var out []string
	for _, p := range strings.Split(s, ",") {
		if p = strings.TrimSpace(p); p != "" {
			out = append(out, p)
		}
	}
	return out
}

// cellString prints a value of the sweep's table: numbers as the fit
// table does, null as n/a, anything else as compact JSON.
func cellString(v any) string {
	switch x := v.(type) {
	case nil:
		return "n/a"
	case float64:
		return num(x)
	case string:
		return x
	}
	b, _ := json.Marshal(v)
	return string(b)
}

// writeSweepJSON writes one JSON line: the constant's name and value, then
// each path's value (null where absent), and the error where the analysis
// failed.
func writeSweepJSON(w io.Writer, name string, val float64, paths []string, cells []any, failed error) error {
	var b strings.Builder
	b.WriteByte('{')
	key := func(k string) {
		kb, _ := json.Marshal(k)
		b.Write(kb)
		b.WriteByte(':')
	}
	key("constant")
	nb, _ := json.Marshal(name)
	b.Write(nb)
	b.WriteByte(',')
	key("value")
	b.WriteString(strconv.FormatFloat(val, 'g', -1, 64))
	for i, p := range paths {
		b.WriteByte(',')
		key(p)
		vb, err := json.Marshal(cells[i])
		if err != nil {
			return err
		}
		b.Write(vb)
	}
	if failed != nil {
		b.WriteByte(',')
		key("error")
		eb, _ := json.Marshal(failed.Error())
		b.Write(eb)
	}
	b.WriteString("}\n")
	_, err := io.WriteString(w, b.String())
	return err
}
