//go:build !(js && wasm)

package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"strings"

	"bellcheck/engine"
	"bellcheck/engine/data"
	"bellcheck/engine/model"
	"bellcheck/engine/paramopt"
)

// fitInputs are the fit command's data file and per-parameter options, as
// given on the command line.
type fitInputs struct {
	dataFiles  []string
	settings   []paramopt.Setting       // from the flags, in the order given
	candidates []paramopt.CandidateSpec // from --gaussian, in the order given
}

// define adds --data, --scale, --points, --box, --vary and --gaussian to a
// command's flags.
func (in *fitInputs) define(fs *flag.FlagSet) {
	in.defineCandidates(fs)
	fs.Func("data", "attach the columns of a CSV or tab-separated `FILE` (with a header row) as named vectors ('-' reads standard input; repeatable)", func(v string) error {
		if v == "" {
			return errors.New("want a file name")
		}
		in.dataFiles = append(in.dataFiles, v)
		return nil
	})
	for _, k := range []struct {
		kind paramopt.Kind
		help string
	}{
		{paramopt.Scale, "fit parameter NAME on a scale: `NAME=identity|log|logit` (repeatable, or NAME=S,NAME2=S2)"},
		{paramopt.Points, "grid points along parameter NAME: `NAME=N` (repeatable)"},
		{paramopt.Box, "the grid's range for parameter NAME: `NAME=LO:HI`, or NAME=LO: or NAME=:HI (repeatable)"},
		{paramopt.Vary, "mark the scalar constant NAME as one to vary over a range: `NAME=LO:HI` (repeatable; sweep uses it)"},
	} {
		kind := k.kind
		fs.Func(string(kind), k.help, func(v string) error {
			s, err := paramopt.ParseFlag(kind, v)
			if err != nil {
				var e *paramopt.Error
				if errors.As(err, &e) {
					return errors.New(e.Msg) // the flag package names the flag
				}
				return err
			}
			in.settings = append(in.settings, s...)
			return nil
		})
	}
}

// defineCandidates adds --gaussian to a command's flags.
func (in *fitInputs) defineCandidates(fs *flag.FlagSet) {
	fs.Func(string(paramopt.Gaussian), "score a Gaussian of your own: `\"NAME mean.P=V sd.P=V corr.P.Q=R ...\"` (or cov.P.Q=V for the spread; repeatable)", func(v string) error {
		spec, err := paramopt.ParseCandidateFlag(v)
		if err != nil {
			var e *paramopt.Error
			if errors.As(err, &e) {
				return errors.New(e.Msg)
			}
			return err
		}
		in.candidates = append(in.candidates, spec)
		return nil
	})
}

// load parses the model text src (read from name) with the data attached,
// and builds the analysis's options: the model file's setting lines first,
// then the flags, which override them. On a problem it writes the message to
// stderr and returns the exit status.
func (in *fitInputs) load(name, src string, stdin io.Reader, stderr io.Writer) (*model.Model, engine.Options, int) {
	var vectors []model.Data
	from := map[string]string{} // column name -> file
	for _, file := range in.dataFiles {
		if file == "-" && name == "-" {
			fmt.Fprint(stderr, "bellcheck fit: --data - and a model from standard input cannot share it; give one of them as a file\n")
			return nil, engine.Options{}, exitUsage
		}
		tb, code := readData(file, stdin, stderr)
		if code != exitOK {
			return nil, engine.Options{}, code
		}
		noteRagged(stderr, file, tb)
		for _, c := range tb.Columns {
			if other, dup := from[c.Name]; dup {
				fmt.Fprintf(stderr, "%s:%d:%d: column %s is also in %s\n", file, c.At.Line, c.At.Col, c.Name, other)
				return nil, engine.Options{}, exitModel
			}
			from[c.Name] = file
		}
		vectors = append(vectors, tb.Vectors()...)
	}
	m, err := model.ParseWith(src, vectors)
	if errors.Is(err, model.ErrData) {
		fmt.Fprintf(stderr, "bellcheck: --data: %v\n", err)
		return nil, engine.Options{}, exitModel
	}
	if err != nil {
		fmt.Fprint(stderr, describeModelError(name, src, err))
		return nil, engine.Options{}, exitModel
	}
	lines, err := paramopt.Lines(src)
	if err != nil {
		fmt.Fprintf(stderr, "%s:%v\n", name, err)
		return nil, engine.Options{}, exitModel
	}
	opts, err := paramopt.Options(m, append(lines, in.settings...))
	if err != nil {
		var e *paramopt.Error
		if errors.As(err, &e) && e.Line > 0 {
			fmt.Fprintf(stderr, "%s:%v\n", name, err)
			return nil, engine.Options{}, exitModel
		}
		fmt.Fprintf(stderr, "bellcheck fit: %v\n", err)
		return nil, engine.Options{}, exitUsage
	}
	specs, err := paramopt.CandidateLines(src)
	if err == nil {
		opts.Candidates, err = paramopt.Candidates(m, append(specs, in.candidates...))
	}
	if err != nil {
		var e *paramopt.Error
		if errors.As(err, &e) && e.Line > 0 {
			fmt.Fprintf(stderr, "%s:%v\n", name, err)
			return nil, engine.Options{}, exitModel
		}
		fmt.Fprintf(stderr, "bellcheck fit: %v\n", err)
		return nil, engine.Options{}, exitUsage
	}
	return m, opts, exitOK
}

// readData reads and parses a data file ('-' for standard input).
func readData(file string, stdin io.Reader, stderr io.Writer) (*data.Table, int) {
	r := stdin
	if file != "-" {
		f, err := os.Open(file)
		if err != nil {
			fmt.Fprintf(stderr, "bellcheck: %v\n", err)
			return nil, exitModel
		}
		defer f.Close()
		if st, err := f.Stat(); err == nil && !st.Mode().IsRegular() {
			fmt.Fprintf(stderr, "bellcheck: %s: not a regular file\n", file)
			return nil, exitModel
		}
		r = f
	}
	b, err := io.ReadAll(io.LimitReader(r, data.MaxBytes+1))
	if err != nil {
		fmt.Fprintf(stderr, "bellcheck: %s: %v\n", file, err)
		return nil, exitModel
	}
	tb, err := data.Parse(string(b))
	if err != nil {
		var e *data.Error
		if errors.As(err, &e) {
			fmt.Fprintf(stderr, "%s:%s\n", file, e.Detail(string(b)))
		} else {
			fmt.Fprintf(stderr, "bellcheck: %s: %v\n", file, err)
		}
		return nil, exitModel
	}
	return tb, exitOK
}

// noteRagged says on stderr when a table's columns differ in length (a
// column that ends early), so that a missing value at a column's end is not
// dropped unnoticed.
func noteRagged(stderr io.Writer, file string, tb *data.Table) {
	ragged := false
	lengths := make([]string, len(tb.Columns))
	for i, c := range tb.Columns {
		ragged = ragged || len(c.Values) != len(tb.Columns[0].Values)
		lengths[i] = fmt.Sprintf("%s %d", c.Name, len(c.Values))
	}
	if ragged {
		fmt.Fprintf(stderr, "bellcheck: note: %s: the columns differ in length (%s)\n", file, strings.Join(lengths, ", "))
	}
}
