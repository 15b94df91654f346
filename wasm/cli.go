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
	"strings"
	"time"

	"bellcheck/app/export"
	"bellcheck/engine"
	"bellcheck/engine/model"
)

// Bounds of the command line.
const (
	// defaultMaxTime is --max-time's default.
	defaultMaxTime = 2 * time.Minute
	// defaultReadTimeout bounds the wait for a model from standard input, a
	// named pipe or a device.
	defaultReadTimeout = time.Minute
	// waitNotice is how long a read from a pipe or terminal waits before
	// it says what it waits for.
	waitNotice = 2 * time.Second
	// progressAfter is when a run starts reporting progress on stderr,
	// and progressEvery how often it reports then.
	progressAfter = 2 * time.Second
	progressEvery = 2 * time.Second
)

// runFit is the fit command: parse a model file, forecast the analysis's
// time, analyse it within --max-time, print a table or the JSON result.
func runFit(args []string, stdin io.Reader, stdout, stderr io.Writer) int {
	stderr = visibleWriter{stderr}
	fs := flag.NewFlagSet("fit", flag.ContinueOnError)
	fs.SetOutput(stderr)
	asJSON := fs.Bool("json", false, "print the result as JSON")
	plots := fs.Bool("plots", false, "include plot data (marginal curves) in the JSON")
	markdown := fs.Bool("markdown", false, "print the comparison (and the two curvatures) as Markdown tables")
	latex := fs.Bool("latex", false, "print the comparison (and the two curvatures) as LaTeX tabulars")
	var in fitInputs // --data, --scale, --points, --box (cli_options.go)
	in.define(fs)
	maxTime := fs.Duration("max-time", defaultMaxTime, "refuse an analysis forecast to take longer, and stop one that does (0: no bound)")
	readTimeout := fs.Duration("read-timeout", defaultReadTimeout, "how long to wait for a model from standard input or a pipe")
	quiet := fs.Bool("quiet", false, "no progress reports on stderr")
	if err := fs.Parse(args); err != nil {
		return exitUsage
	}
	if fs.NArg() != 1 {
		fmt.Fprint(stderr, "bellcheck fit: want one model file ('-' for standard input)\n"+usage)
		return exitUsage
	}
	if *maxTime < 0 || *readTimeout <= 0 {
		fmt.Fprint(stderr, "bellcheck fit: --max-time must not be negative, --read-timeout must be positive\n")
		return exitUsage
	}
	name := fs.Arg(0)
	src, err := readModel(name, stdin, *readTimeout, stderr)
	if err != nil {
		fmt.Fprintf(stderr, "bellcheck: %v\n", err)
		return exitModel
	}
	m, opts, code := in.load(name, string(src), stdin, stderr)
	if code != exitOK {
		return code
	}
	opts.Plots = *plots
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt)
	defer stop()
	est, err := engine.EstimateWork(ctx, m, opts)
	if err != nil {
		fmt.Fprintf(stderr, "bellcheck: %s: %v\n", name, err)
		return exitModel
	}
	if *maxTime > 0 && est.Total > *maxTime {
		fmt.Fprint(stderr, tooLong(name, est, *maxTime))
		return exitModel
	}
	if *maxTime > 0 {
		var cancel context.CancelFunc
		ctx, cancel = context.WithTimeout(ctx, *maxTime)
		defer cancel()
	}
	var progress engine.ProgressFunc
	if !*quiet {
		progress = progressReporter(stderr, est, time.Now())
	}
	res, err := engine.Analyse(ctx, m, opts, progress)
	if errors.Is(err, context.DeadlineExceeded) {
		fmt.Fprintf(stderr, "bellcheck: %s: stopped after --max-time %v (the forecast was %v); allow more time with --max-time, or use a coarser grid with --points\n",
			name, *maxTime, est)
		return exitModel
	}
	if err != nil {
		fmt.Fprintf(stderr, "bellcheck: %s: %v\n", name, err)
		return exitModel
	}
	if *asJSON {
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		if err := enc.Encode(res); err != nil {
			fmt.Fprintf(stderr, "bellcheck: %v\n", err)
			return exitModel
		}
		return exitOK
	}
	if *markdown || *latex {
		format := export.Markdown
		if *latex {
			format = export.LaTeX
		}
		out := visibleWriter{stdout}
		fmt.Fprint(out, format(export.ResultTable(res)))
		if ct, ok := export.CurvatureTable(res); ok {
			fmt.Fprint(out, "\n"+format(ct))
		}
		return exitOK
	}
	writeTable(visibleWriter{stdout}, name, res)
	return exitOK
}

// tooLong says that an analysis would take longer than allowed, and offers
// the cheaper plans: more time, or a coarser grid.
func tooLong(name string, est engine.Estimate, maxTime time.Duration) string {
	var b strings.Builder
	fmt.Fprintf(&b, "bellcheck: %s: the analysis would take %v, more than --max-time %v.\n", name, est, maxTime)
	fmt.Fprintf(&b, "  Allow it with --max-time %v", (est.Total*3/2).Truncate(time.Minute)+time.Minute)
	if n := est.PointsWithin(maxTime); n > 0 {
		fmt.Fprintf(&b, ", or use a coarser grid that fits: --points %d", n)
	} else {
		b.WriteString(" (even the coarsest grid would take longer: the model's density is costly; summarise the data, for instance by counts, or use fewer observations)")
	}
	b.WriteString(".\n")
	return b.String()
}

// progressReporter returns a progress callback that writes a line on w
// every progressEvery once the run has taken progressAfter.
func progressReporter(w io.Writer, est engine.Estimate, began time.Time) engine.ProgressFunc {
	var last time.Time
	return func(p engine.Progress) {
		now := time.Now()
		spent := now.Sub(began)
		if spent < progressAfter || now.Sub(last) < progressEvery {
			return
		}
		last = now
		left := ""
		if p.Fraction > 0.05 {
			left = fmt.Sprintf(", about %v left", (time.Duration(float64(spent)/p.Fraction) - spent).Round(time.Second))
		}
		fmt.Fprintf(w, "bellcheck: %3.0f%% %s, %v%s\n", 100*p.Fraction, strings.ReplaceAll(p.Stage, "_", " "), spent.Round(time.Second), left)
	}
}

// readModel reads the model text from a file, or standard input for "-",
// at most one byte past model.MaxSource (so that an oversized model is
// reported by the parser's own size check rather than silently truncated).
// A regular file is read at once; standard input, a named pipe or a device
// may never deliver: after waitNotice the wait is announced on stderr, and
// after timeout it ends with an error.
func readModel(name string, stdin io.Reader, timeout time.Duration, stderr io.Writer) ([]byte, error) {
	what := "standard input"
	if name != "-" {
		fi, err := os.Stat(name)
		if err != nil {
			return nil, err
		}
		if fi.IsDir() {
			return nil, fmt.Errorf("%s is a directory, not a model file", name)
		}
		if fi.Mode().IsRegular() {
			f, err := os.Open(name)
			if err != nil {
				return nil, err
			}
			defer f.Close()
			return io.ReadAll(io.LimitReader(f, model.MaxSource+1))
		}
		what = name
	}
	type result struct {
		b   []byte
		err error
	}
	done := make(chan result, 1)
	go func() {
		r := stdin
		if name != "-" {
			f, err := os.Open(name) // a named pipe blocks here until a writer opens it
			if err != nil {
				done <- result{nil, err}
				return
			}
			defer f.Close()
			r = f
		}
		b, err := io.ReadAll(io.LimitReader(r, model.MaxSource+1))
		done <- result{b, err}
	}()
	notice := time.NewTimer(min(waitNotice, timeout))
	defer notice.Stop()
	limit := time.NewTimer(timeout)
	defer limit.Stop()
	for {
		select {
		case r := <-done:
			return r.b, r.err
		case <-notice.C:
			fmt.Fprintf(stderr, "bellcheck: waiting for the model on %s (end it with Ctrl-D on a terminal; giving up after %v)\n", what, timeout)
		case <-limit.C:
			return nil, fmt.Errorf("no model arrived on %s within %v (--read-timeout)", what, timeout)
		}
	}
}

// describeModelError renders a model error with the file name, the line and
// a caret under the place; invisible characters in the line are shown as
// <U+XXXX>, the caret moved to match.
func describeModelError(name, src string, err error) string {
	var list model.ErrorList
	if errors.As(err, &list) && len(list) > 0 {
		e := *list[0]
		head := e.Error()
		lines := strings.Split(src, "\n")
		if e.Pos.Line >= 1 && e.Pos.Line <= len(lines) {
			runes := []rune(lines[e.Pos.Line-1])
			if c := e.Pos.Col - 1; c >= 0 && c <= len(runes) {
				e.Pos.Col = len([]rune(model.Visible(string(runes[:c])))) + 1
			}
		}
		detail := e.Detail(model.Visible(src))
		if i := strings.IndexByte(detail, '\n'); i >= 0 {
			detail = detail[i:]
		} else {
			detail = ""
		}
		return name + ":" + head + detail + "\n"
	}
	return fmt.Sprintf("%s: %v\n", name, err)
}

// visibleWriter writes text with invisible characters (bidirectional
// controls, zero-width characters) shown as <U+XXXX>, so no message echoes
// a character that reorders or hides the text around it.
type visibleWriter struct{ w io.Writer }

func (v visibleWriter) Write(p []byte) (int, error) {
	if _, err := io.WriteString(v.w, model.Visible(string(p))); err != nil {
		return 0, err
	}
	return len(p), nil
}
