package ui

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"strconv"
	"sync"
	"time"

	"bellcheck/app/jsdom"
	"bellcheck/app/share"
	"bellcheck/engine"
	"bellcheck/engine/eval"
	"bellcheck/engine/model"
)

// The JavaScript API on window, for pages that script the calculator:
//
//	window.bellcheck.analyse(modelText, options?)  Promise of the result
//	window.bellcheck.timeGrid(modelText, n)        Promise of {ms, points}
//	window.bellcheck.version                       the link format version
//
// The API is set when the program starts, and APIReadyEvent fires on window
// then.
const (
	// APIName is the property of window that holds the API.
	APIName = "bellcheck"
	// APIReadyEvent is the event fired on window once the API is set.
	APIReadyEvent = "bellcheck-ready"
)

// Limits of the API.
const (
	// MaxTimeGrid is the largest n of timeGrid (n x n points).
	MaxTimeGrid = 4096
	// timeGridBlock is about the number of points evaluated per call of
	// LogDensityBlock (whole lines of the grid, at least one), as the
	// engine's grid does.
	timeGridBlock = 1024
	// APIDefaultMaxSeconds is analyse's time bound when options give none
	// (the command line's --max-time default).
	APIDefaultMaxSeconds = 120
)

// Errors of the API (the Promise rejects with their text).
var (
	ErrAPIArgs = errors.New("bellcheck: bad arguments")
	ErrAPIDim  = errors.New("bellcheck: timeGrid needs a model of two parameters")
	// ErrAPITime means an analysis beyond analyse's time bound: forecast
	// to take longer (not started) or stopped when it overran.
	ErrAPITime = errors.New("bellcheck: time bound")
)

// apiAnalyse runs analyse's analyses (engine.Analyse; tests set another).
var apiAnalyse AnalyseFunc = engine.Analyse

// apiOptionsJSON is analyse's options: engine.Options' JSON with the time
// bound beside it.
type apiOptionsJSON struct {
	engine.Options
	// MaxSeconds bounds the analysis's time in seconds (nil: the default,
	// APIDefaultMaxSeconds; 0: no bound).
	MaxSeconds *float64 `json:"max_seconds,omitempty"`
}

// apiMu runs the API's calls one after another, so that a script firing
// many calls does not hold many analyses in memory at once.
var apiMu sync.Mutex

// InstallAPI sets window.bellcheck and fires APIReadyEvent. Natively it
// returns jsdom.ErrNoBrowser.
func InstallAPI() error {
	err := jsdom.ExposeAPI(APIName,
		map[string]string{"version": strconv.Itoa(share.Version)},
		map[string]jsdom.AsyncFunc{"analyse": APIAnalyse, "timeGrid": APITimeGrid})
	if err != nil {
		return err
	}
	return jsdom.DispatchEvent(APIReadyEvent)
}

// APIAnalyse is window.bellcheck.analyse: args are the JSON texts of the
// model text (a string; null is refused) and optionally of the options, an
// object in the shape of engine.Options' JSON ({"params": [{"scale": "log",
// "points": 201, "lo": 0, "hi": 5}, ...], "plots": false}; null or
// undefined means the defaults), and "max_seconds", the time bound
// (APIDefaultMaxSeconds when absent, 0 for none): an analysis forecast to
// take longer (engine.EstimateWork) is not started, and one that runs
// longer is cancelled, both with an ErrAPITime error saying so. The bound
// counts from the analysis's start: calls wait for each other first.
// Options with unknown fields, of the wrong type, or beyond the engine's
// limits for the model (engine.CheckOptions) are refused with the reason. It returns the result as
// the command line's JSON (engine.Result's MarshalJSON, without plots unless
// asked for). A model error gives an error whose text starts with the
// line:column of the first problem.
func APIAnalyse(args []string) (string, error) {
	if len(args) < 1 || len(args) > 2 {
		return "", fmt.Errorf("%w: analyse(modelText, options?) takes one or two arguments", ErrAPIArgs)
	}
	src, err := apiString(args[0], "modelText")
	if err != nil {
		return "", err
	}
	var opts engine.Options
	limit := time.Duration(APIDefaultMaxSeconds) * time.Second
	if len(args) == 2 && args[1] != "" && args[1] != "null" {
		if opts, limit, err = apiOptions(args[1]); err != nil {
			return "", err
		}
	}
	m, err := model.Parse(src)
	if err != nil {
		return "", apiModelError(err)
	}
	if problems := engine.CheckOptions(m, opts); len(problems) > 0 {
		return "", fmt.Errorf("%w: options: %s", ErrAPIArgs, model.Visible(problems[0].Error()))
	}
	apiMu.Lock()
	defer apiMu.Unlock()
	res, err := apiBounded(m, opts, limit)
	if err != nil {
		return "", err
	}
	out, err := json.Marshal(res)
	if err != nil {
		return "", err
	}
	return string(out), nil
}

// apiString decodes a JSON string argument; null, a number, an object or a
// missing argument is refused (JSON's null would otherwise decode as "").
func apiString(arg, name string) (string, error) {
	var s string
	if arg == "" || arg == "null" || arg[0] != '"' || json.Unmarshal([]byte(arg), &s) != nil {
		got := "nothing"
		switch {
		case arg == "null":
			got = "null"
		case arg != "" && (arg[0] == '{' || arg[0] == '['):
			got = "an object"
		case arg != "":
			got = arg
			if len(got) > 20 {
				got = got[:20] + "…"
			}
		}
		return "", fmt.Errorf("%w: %s must be a string, got %s", ErrAPIArgs, name, model.Visible(got))
	}
	return s, nil
}

// apiBounded runs the analysis within limit (0: no bound): it forecasts
// the work first and refuses one forecast to take longer, and cancels one
// that overruns.
func apiBounded(m *model.Model, opts engine.Options, limit time.Duration) (*engine.Result, error) {
	ctx, cancel := context.Background(), context.CancelFunc(func() {})
	if limit > 0 {
		est, err := forecastWork(ctx, m, opts, limit)
		if err != nil {
			return nil, err
		}
		if est.Total > limit {
			msg := fmt.Sprintf("the analysis would take %v, more than max_seconds %v; not started: allow more time with max_seconds", est, limit.Seconds())
			if n := est.PointsWithin(limit); n > 0 {
				msg += fmt.Sprintf(", or use a coarser grid (points: %d per parameter fits)", n)
			}
			return nil, fmt.Errorf("%w: %s", ErrAPITime, msg)
		}
		ctx, cancel = context.WithTimeout(ctx, limit)
	}
	defer cancel()
	y := newYielder(SliceLength)
	began := time.Now()
	res, err := apiAnalyse(ctx, m, opts, func(engine.Progress) { y.Yield() })
	if err != nil && errors.Is(err, context.DeadlineExceeded) {
		return nil, fmt.Errorf("%w: the analysis was stopped after %.1f s, its max_seconds %v; nothing was returned: allow more time with max_seconds (0 for no bound), or use a coarser grid", ErrAPITime, time.Since(began).Seconds(), limit.Seconds())
	}
	return res, err
}

// apiOptions decodes and checks the options of analyse, and returns them
// with the time bound.
func apiOptions(arg string) (engine.Options, time.Duration, error) {
	var oj apiOptionsJSON
	limit := time.Duration(APIDefaultMaxSeconds) * time.Second
	if arg[0] != '{' {
		return oj.Options, limit, fmt.Errorf("%w: options must be an object such as {\"params\": [{\"points\": 201}]}", ErrAPIArgs)
	}
	dec := json.NewDecoder(bytes.NewReader([]byte(arg)))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&oj); err != nil {
		return oj.Options, limit, fmt.Errorf("%w: options: %v", ErrAPIArgs, err)
	}
	if ms := oj.MaxSeconds; ms != nil {
		// A year at most: far beyond any analysis, and within a Duration.
		if !(*ms >= 0 && *ms <= 365*24*3600) {
			return oj.Options, limit, fmt.Errorf("%w: options: max_seconds %v, want a number of seconds from 0 (no bound) to a year", ErrAPIArgs, *ms)
		}
		limit = time.Duration(*ms * float64(time.Second))
	}
	o, err := checkAPIOptions(oj.Options)
	return o, limit, err
}

// checkAPIOptions checks the per-parameter options of analyse.
func checkAPIOptions(o engine.Options) (engine.Options, error) {
	if len(o.Params) > model.MaxParams {
		return o, fmt.Errorf("%w: options: %d parameter settings, at most %d", ErrAPIArgs, len(o.Params), model.MaxParams)
	}
	for i, p := range o.Params {
		switch p.Scale {
		case "", engine.Identity, engine.Log, engine.Logit:
		default:
			return o, fmt.Errorf("%w: options: parameter %d: unknown scale %q (identity, log or logit)", ErrAPIArgs, i+1, p.Scale)
		}
		if p.Points < 0 {
			return o, fmt.Errorf("%w: options: parameter %d: %d grid points, want 0 (the default) or more", ErrAPIArgs, i+1, p.Points)
		}
		if p.Lo != nil && p.Hi != nil && !(*p.Lo < *p.Hi) {
			return o, fmt.Errorf("%w: options: parameter %d: lo %g is not below hi %g", ErrAPIArgs, i+1, *p.Lo, *p.Hi)
		}
	}
	return o, nil
}

// apiModelError describes a model error: "line:col: message", the first
// problem's hint, and how many more there are.
func apiModelError(err error) error {
	var list model.ErrorList
	if errors.As(err, &list) && len(list) > 0 {
		msg := list[0].Error()
		if list[0].Hint != "" {
			msg += " (hint: " + list[0].Hint + ")"
		}
		if len(list) > 1 {
			msg += " and " + strconv.Itoa(len(list)-1) + " more problem"
			if len(list) > 2 {
				msg += "s"
			}
		}
		return errors.New("model error at " + msg)
	}
	return err
}

// TimeGrid is the answer of timeGrid.
type TimeGrid struct {
	// MS is the time of the evaluation loop (LogDensityBlock over every
	// block, and filling the blocks' columns), in milliseconds.
	MS float64 `json:"ms"`
	// Points is the number of points evaluated (n*n).
	Points int `json:"points"`
}

// APITimeGrid is window.bellcheck.timeGrid, a diagnostic hook for
// benchmarks: it compiles a model of two parameters and times the compiled
// log-density's LogDensityBlock over an n by n grid of cell centres (blocks
// of whole lines of about 1024 points, as the engine's grid evaluates; the
// time includes filling the blocks' columns), in the box each
// parameter's support gives ([lo, hi] when both are finite, 10 wide from a
// single finite bound, [-5, 5] otherwise). args are the JSON texts of the
// model text and of n (2 to MaxTimeGrid).
func APITimeGrid(args []string) (string, error) {
	if len(args) != 2 {
		return "", fmt.Errorf("%w: timeGrid(modelText, n) takes two arguments", ErrAPIArgs)
	}
	src, err := apiString(args[0], "modelText")
	if err != nil {
		return "", err
	}
	var nf float64
	if err := json.Unmarshal([]byte(args[1]), &nf); err != nil || nf != math.Trunc(nf) || nf < 2 || nf > MaxTimeGrid {
		return "", fmt.Errorf("%w: n must be a whole number from 2 to %d", ErrAPIArgs, MaxTimeGrid)
	}
	m, err := model.Parse(src)
	if err != nil {
		return "", apiModelError(err)
	}
	apiMu.Lock()
	defer apiMu.Unlock()
	tg, err := timeGrid(m, int(nf))
	if err != nil {
		return "", err
	}
	out, err := json.Marshal(tg)
	return string(out), err
}

// timeBox returns the range timeGrid covers for a parameter.
func timeBox(p model.Param) (lo, hi float64) {
	loOK, hiOK := !math.IsInf(p.Lo, 0) && !math.IsNaN(p.Lo), !math.IsInf(p.Hi, 0) && !math.IsNaN(p.Hi)
	switch {
	case loOK && hiOK:
		return p.Lo, p.Hi
	case loOK:
		return p.Lo, p.Lo + 10
	case hiOK:
		return p.Hi - 10, p.Hi
	}
	return -5, 5
}

// fillCopies sets every element of v to x by doubling copies.
func fillCopies(v []float64, x float64) {
	if len(v) == 0 {
		return
	}
	v[0] = x
	for done := 1; done < len(v); done *= 2 {
		copy(v[done:], v[:done])
	}
}

// timeGrid evaluates the compiled model over an n by n grid and times it.
func timeGrid(m *model.Model, n int) (TimeGrid, error) {
	if len(m.Params) != 2 {
		return TimeGrid{}, fmt.Errorf("%w (this one has %d)", ErrAPIDim, len(m.Params))
	}
	ev, err := eval.Compile(m)
	if err != nil {
		return TimeGrid{}, err
	}
	x0, x1 := timeBox(m.Params[0])
	y0, y1 := timeBox(m.Params[1])
	hx, hy := (x1-x0)/float64(n), (y1-y0)/float64(n)
	// The cells' centres along each axis, computed once. The blocks are
	// whole lines of the grid (at least timeGridBlock points, as the
	// engine's grid makes them), filled by copying: a division, a remainder
	// or a branch per point would cost about as much as a small model's
	// evaluation under WebAssembly.
	xs, ys := make([]float64, n), make([]float64, n)
	for i := range xs {
		xs[i] = x0 + (float64(i)+0.5)*hx
		ys[i] = y0 + (float64(i)+0.5)*hy
	}
	lines := max(1, timeGridBlock/n)
	cols := [][]float64{make([]float64, lines*n), make([]float64, lines*n)}
	out := make([]float64, lines*n)
	total := n * n
	// One clock reading around the whole loop: the browser's clock is
	// coarse (0.1 ms).
	began := time.Now()
	for iy := 0; iy < n; iy += lines {
		k := min(lines, n-iy) * n
		cx, cy := cols[0][:k], cols[1][:k]
		for l := 0; l*n < k; l++ {
			copy(cx[l*n:(l+1)*n], xs)
			fillCopies(cy[l*n:(l+1)*n], ys[iy+l])
		}
		ev.LogDensityBlock([][]float64{cx, cy}, out[:k])
	}
	spent := time.Since(began)
	return TimeGrid{MS: float64(spent) / float64(time.Millisecond), Points: total}, nil
}
