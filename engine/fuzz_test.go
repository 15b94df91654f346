package engine

import (
	"context"
	"errors"
	"fmt"
	"math/rand/v2"
	"strings"
	"testing"
	"time"

	"bellcheck/engine/grid"
	"bellcheck/engine/model"
)

// FuzzAnalyse analyses small random models: the fuzzer's bytes are read as
// the choices of a generator of models (one to three parameters, their
// supports and fitting scales, a density built from the language's
// operators, functions and families), so every input is a model the front
// end accepts. Nothing may panic, the analysis must finish (or fail with
// one of the errors that say there is nothing to analyse), and the result
// must pass the honesty checks of honesty_test.go: a fit only with a
// finite mean and a positive-definite covariance, KL divergences not below
// zero, coverage in [0, 1], the ELBO not above log Z, and a reason for
// every absent quantity (candidates' scores included). Options unsound by
// construction (a candidate Gaussian with a non-finite or non-positive
// spread or a correlation of one, an empty range to vary) must be refused
// with ErrOptions. The seed corpus is testdata/fuzz/FuzzAnalyse.
func FuzzAnalyse(f *testing.F) {
	// A few generated seeds besides the corpus files, so that the target
	// starts from varied models even without them.
	rng := rand.New(rand.NewPCG(7, 11))
	for i := 0; i < 8; i++ {
		b := make([]byte, 24)
		for j := range b {
			b[j] = byte(rng.UintN(256))
		}
		f.Add(b)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		fc := generateModel(data)
		src, opts := fc.src, fc.opts
		m, err := model.Parse(src)
		if err != nil {
			// The generator writes only what the language accepts; a model
			// it rejects is a bug of the generator or of the front end.
			t.Fatalf("generated model does not parse: %v\n%s", err, src)
		}
		if fc.slider != nil {
			// A slider's value, at or beyond its range's ends: the page
			// analyses model.WithConstant's model.
			if m, err = model.WithConstant(m, fuzzConstName, *fc.slider); err != nil {
				t.Fatalf("constant %s = %v: %v\n%s", fuzzConstName, *fc.slider, err, src)
			}
		}
		ctx, cancel := context.WithTimeout(context.Background(), fuzzTimeout)
		defer cancel()
		res, err := Analyse(ctx, m, opts, nil)
		if fc.badOptions != "" && !errors.Is(err, ErrOptions) {
			t.Fatalf("options with %s accepted (error %v):\n%s\noptions %+v", fc.badOptions, err, src, opts)
		}
		if err != nil {
			switch {
			case errors.Is(err, context.DeadlineExceeded):
				// Slow, not hung: the analysis honoured its deadline, as
				// the page's and the API's time bounds need. A run that
				// ignored it would be killed by the fuzzer after 10 s and
				// reported as a crash.
				t.Skipf("analysis cancelled after %v:\n%s\noptions %+v", fuzzTimeout, src, opts)
			case errors.Is(err, grid.ErrNoBox), errors.Is(err, grid.ErrNoMass):
				return // nothing to analyse, and the error says so
			case errors.Is(err, ErrOptions) && (fc.badOptions != "" || fc.maybeBad):
				return // refused, as it must be
			}
			t.Fatalf("analysis failed: %v\n%s\noptions %+v", err, src, opts)
		}
		if bad := honesty(res, len(m.Params)); len(bad) > 0 {
			t.Fatalf("misleading result for\n%s\noptions %+v:\n  %s\ndiagnostics:\n%s", src, opts, strings.Join(bad, "\n  "), diagLines(res))
		}
	})
}

// fuzzTimeout bounds one analysis. Go's fuzzer kills a worker whose input
// runs 10 s (internal/fuzz, RunFuzzWorker) and reports a crash without the
// input's text; an 18-minute run on a loaded machine met a generated model
// slower than that. So an analysis is cancelled after 7 s (and the input
// skipped: slow but cancellable), and only one that does not stop when
// cancelled still fails.
const fuzzTimeout = 7 * time.Second

func diagLines(res *Result) string {
	var b strings.Builder
	for _, d := range res.Diagnostics {
		fmt.Fprintf(&b, "  %s (%s): %s\n", d.Code, d.Severity, d.Message)
	}
	return b.String()
}

// choices reads a generator's decisions from bytes, and zeros once they
// run out (so every input gives a finite model).
type choices struct {
	b []byte
	i int
}

func (c *choices) pick(n int) int {
	if c.i >= len(c.b) {
		return 0
	}
	v := int(c.b[c.i]) % n
	c.i++
	return v
}

var (
	fuzzNames     = []string{"x", "y", "z"}
	fuzzConstants = []string{"0", "1", "2", "3", "0.5", "(-1)", "(-2.5)", "10", "1e-3", "1e3", "1e8", "1e-8", "pi", "100", "0.1", "1.5"}
	fuzzUnary     = []string{"exp", "log", "sqrt", "abs", "sin", "cos", "tanh", "atan", "lgamma", "log1p", "logistic", "log1pexp", "erf", "expm1", "cosh"}
	fuzzBinary    = []string{"+", "-", "*", "/", "^"}
	fuzzSupports  = []string{"", " in [0, inf]", " in [0, 1]", " in [-2, 3]", " in [1e6, inf]", " in [-inf, 0]"}
)

// generateModel turns bytes into a model and its options. The base model
// (parameters, supports, scales, grid points and a density) is read first;
// the bytes left after it choose the forms of fuzz_dyn_test.go (constants
// to vary, functions, data vectors with indexing, repeat and ode blocks,
// sums that EP splits into factors, candidate Gaussians): an input that
// ends with the base model gives the base model alone, as before those
// forms were added, so the older corpus files keep their meaning.
func generateModel(data []byte) fuzzCase {
	c := &choices{b: data}
	d := 1 + c.pick(2)
	if c.pick(16) == 0 {
		d = 3
	}
	var params strings.Builder
	opts := Options{Params: make([]ParamOptions, d)}
	for k := 0; k < d; k++ {
		sup := c.pick(len(fuzzSupports))
		fmt.Fprintf(&params, "param %s%s\n", fuzzNames[k], fuzzSupports[sup])
		switch scale := c.pick(3); {
		case scale == 1 && (sup == 1 || sup == 4):
			opts.Params[k].Scale = Log
		case scale == 2 && (sup == 2 || sup == 3):
			opts.Params[k].Scale = Logit
		}
		// Small grids beyond one parameter keep each run short.
		switch d {
		case 2:
			opts.Params[k].Points = []int{0, 101, 61}[c.pick(3)]
		case 3:
			opts.Params[k].Points = 21
		}
	}
	g := &exprGen{c: c, d: d}
	e := g.expr(4)
	form := c.pick(4)
	var density strings.Builder
	switch form {
	case 0:
		density.WriteString(e)
	case 1:
		// A random perturbation of a normal density, proper far more often.
		density.WriteString(e)
		for k := 0; k < d; k++ {
			fmt.Fprintf(&density, " - %s^2/2", fuzzNames[k])
		}
	case 2:
		density.WriteString("cost " + e)
	case 3:
		density.WriteString(e)
		for k := 0; k < d; k++ {
			fmt.Fprintf(&density, " + ld_normal(%s, 0, 3)", fuzzNames[k])
		}
	}
	fc := fuzzCase{opts: opts}
	x := g.extras(&fc)
	if x.term != "" {
		if form == 2 {
			density.WriteString(" - (" + x.term + ")")
		} else {
			density.WriteString(" + " + x.term)
		}
	}
	fc.src = x.head + params.String() + x.prelude + density.String() + "\n"
	return fc
}

type exprGen struct {
	c *choices
	d int
	// names, when set, replace the parameters as the expressions'
	// variables (a function's arguments); leaves are further names an
	// expression may use (a constant, a block's state).
	names  []string
	leaves []string
}

func (g *exprGen) param() string {
	if g.names != nil {
		return g.names[g.c.pick(len(g.names))]
	}
	return fuzzNames[g.c.pick(g.d)]
}

func (g *exprGen) leaf() string {
	// Without further leaves the choices are those of the base model's
	// generator (so the older corpus files keep their meaning).
	if len(g.leaves) > 0 && g.c.pick(3) == 0 {
		return g.leaves[g.c.pick(len(g.leaves))]
	}
	if g.c.pick(2) == 0 {
		return g.param()
	}
	return fuzzConstants[g.c.pick(len(fuzzConstants))]
}

func (g *exprGen) expr(depth int) string {
	if depth == 0 {
		return g.leaf()
	}
	switch g.c.pick(8) {
	case 0:
		return g.leaf()
	case 1:
		return "-(" + g.expr(depth-1) + ")"
	case 2:
		return fuzzUnary[g.c.pick(len(fuzzUnary))] + "(" + g.expr(depth-1) + ")"
	case 3, 4:
		return "(" + g.expr(depth-1) + ")" + fuzzBinary[g.c.pick(len(fuzzBinary))] + "(" + g.expr(depth-1) + ")"
	case 5:
		return g.family(depth - 1)
	case 6:
		fn := []string{"logsumexp", "max", "min"}[g.c.pick(3)]
		return fn + "(" + g.expr(depth-1) + ", " + g.expr(depth-1) + ")"
	}
	// A family in a parameter with constant arguments: the common case.
	return g.familyOf(g.param(), 0)
}

// family is a log-density family of a random argument.
func (g *exprGen) family(depth int) string {
	return g.familyOf(g.expr(depth), depth)
}

func (g *exprGen) familyOf(x string, depth int) string {
	arg := func() string {
		if depth > 0 && g.c.pick(3) == 0 {
			return g.expr(depth - 1)
		}
		return fuzzConstants[g.c.pick(len(fuzzConstants))]
	}
	switch g.c.pick(8) {
	case 0:
		return "ld_normal(" + x + ", " + arg() + ", " + arg() + ")"
	case 1:
		return "ld_student(" + x + ", " + arg() + ", " + arg() + ", " + arg() + ")"
	case 2:
		return "ld_cauchy(" + x + ", " + arg() + ", " + arg() + ")"
	case 3:
		return "ld_gamma(" + x + ", " + arg() + ", " + arg() + ")"
	case 4:
		return "ld_beta(" + x + ", " + arg() + ", " + arg() + ")"
	case 5:
		return "ld_lognormal(" + x + ", " + arg() + ", " + arg() + ")"
	case 6:
		return "ld_laplace(" + x + ", " + arg() + ", " + arg() + ")"
	}
	return "ld_logistic(" + x + ", " + arg() + ", " + arg() + ")"
}
