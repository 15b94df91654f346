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

	"bellcheck/app/export"
	"bellcheck/engine"
	"bellcheck/engine/model"
)

// runFit is the fit command: parse a model file, analyse it, print a table
// or the JSON result.
func runFit(args []string, stdin io.Reader, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("fit", flag.ContinueOnError)
	fs.SetOutput(stderr)
	asJSON := fs.Bool("json", false, "print the result as JSON")
	plots := fs.Bool("plots", false, "include plot data (marginal curves) in the JSON")
	markdown := fs.Bool("markdown", false, "print the comparison (and the two curvatures) as Markdown tables")
	latex := fs.Bool("latex", false, "print the comparison (and the two curvatures) as LaTeX tabulars")
	var in fitInputs // --data, --scale, --points, --box (cli_options.go)
	in.define(fs)
	if err := fs.Parse(args); err != nil {
		return exitUsage
	}
	if fs.NArg() != 1 {
		fmt.Fprint(stderr, "bellcheck fit: want one model file ('-' for standard input)\n"+usage)
		return exitUsage
	}
	name := fs.Arg(0)
	src, err := readModel(name, stdin)
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
	res, err := engine.Analyse(ctx, m, opts, nil)
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
		fmt.Fprint(stdout, format(export.ResultTable(res)))
		if ct, ok := export.CurvatureTable(res); ok {
			fmt.Fprint(stdout, "\n"+format(ct))
		}
		return exitOK
	}
	writeTable(stdout, name, res)
	return exitOK
}

// readModel reads the model text from a file, or standard input for "-".
func readModel(name string, stdin io.Reader) ([]byte, error) {
	var r io.Reader = stdin
	if name != "-" {
		f, err := os.Open(name)
		if err != nil {
			return nil, err
		}
		defer f.Close()
		r = f
	}
	// Read one byte past the limit so that an oversized model is reported
	// by the parser's own size check rather than silently truncated.
	return io.ReadAll(io.LimitReader(r, model.MaxSource+1))
}

// describeModelError renders a model error with the file name, the line and
// a caret under the place.
func describeModelError(name, src string, err error) string {
	var list model.ErrorList
	if errors.As(err, &list) && len(list) > 0 {
		return name + ":" + list[0].Detail(src) + "\n"
	}
	return fmt.Sprintf("%s: %v\n", name, err)
}
