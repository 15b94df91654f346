package ui

import (
	"context"
	"encoding/json"
	"errors"
	"math"
	"strings"
	"testing"
	"time"

	"bellcheck/engine"
	"bellcheck/engine/model"
)

// jsArgs encodes arguments as the browser hands them to the API: each as
// its JSON.stringify text.
func jsArgs(t *testing.T, args ...any) []string {
	t.Helper()
	out := make([]string, len(args))
	for i, a := range args {
		b, err := json.Marshal(a)
		if err != nil {
			t.Fatal(err)
		}
		out[i] = string(b)
	}
	return out
}

func TestAPIAnalyseReturnsTheCommandLineJSON(t *testing.T) {
	out, err := APIAnalyse(jsArgs(t, "param x\nld_normal(x, 1.5, 2)\n"))
	if err != nil {
		t.Fatal(err)
	}
	var r struct {
		Params []string `json:"params"`
		Exact  struct {
			LogZ float64   `json:"log_z"`
			Mean []float64 `json:"mean"`
			SD   []float64 `json:"sd"`
		} `json:"exact"`
		Plots json.RawMessage `json:"plots"`
	}
	if err := json.Unmarshal([]byte(out), &r); err != nil {
		t.Fatalf("not JSON: %v", err)
	}
	// A normalised density: log Z = 0; mean 1.5, sd 2 (the normal's own
	// parameters; the grid's accuracy is far better than 1e-6 here).
	if len(r.Params) != 1 || r.Params[0] != "x" || math.Abs(r.Exact.LogZ) > 1e-6 ||
		math.Abs(r.Exact.Mean[0]-1.5) > 1e-6 || math.Abs(r.Exact.SD[0]-2) > 1e-6 {
		t.Errorf("result %+v", r)
	}
	if r.Plots != nil {
		t.Error("plots in the result without asking")
	}
	// Options in engine.Options' JSON shape.
	out, err = APIAnalyse(jsArgs(t, "param s in [0, inf]\nld_gamma(s, 3, 2)\n",
		map[string]any{"params": []any{map[string]any{"scale": "log", "points": 151}}, "plots": true}))
	if err != nil {
		t.Fatal(err)
	}
	var r2 struct {
		Scales []string `json:"scales"`
		Grid   struct {
			Points []int `json:"points"`
		} `json:"grid"`
		Plots json.RawMessage `json:"plots"`
	}
	if err := json.Unmarshal([]byte(out), &r2); err != nil {
		t.Fatal(err)
	}
	if len(r2.Scales) != 1 || r2.Scales[0] != "log" || len(r2.Grid.Points) != 1 || r2.Grid.Points[0] != 151 || r2.Plots == nil {
		t.Errorf("options not applied: %+v", r2)
	}
}

func TestAPIAnalyseRejectsWithWhereAndWhat(t *testing.T) {
	cases := []struct {
		name string
		args []string
		want string
	}{
		{"model error", jsArgs(t, "param x\nld_normal(x, 0, 1"), "model error at 2:"},
		{"unknown name", jsArgs(t, "ld_nromal(x, 0, 1)"), "model error at 1:1:"},
		{"not a string", jsArgs(t, 42), "modelText must be a string"},
		{"no argument", nil, "one or two arguments"},
		{"undefined", []string{""}, "modelText must be a string"},
		{"unknown option", jsArgs(t, "-x^2", map[string]any{"bogus": 1}), `unknown field "bogus"`},
		{"bad scale", jsArgs(t, "-x^2", map[string]any{"params": []any{map[string]any{"scale": "sqrt"}}}), "unknown scale"},
		{"too many points", jsArgs(t, "-x^2", map[string]any{"params": []any{map[string]any{"points": 1e6}}}), "grid points"},
		{"lo above hi", jsArgs(t, "-x^2", map[string]any{"params": []any{map[string]any{"lo": 2, "hi": 1}}}), "not below"},
		{"scale against support", jsArgs(t, "-x^2", map[string]any{"params": []any{map[string]any{"scale": "log"}}}), "does not suit the support"},
		{"null model", jsArgs(t, nil), "modelText must be a string, got null"},
		{"object model", jsArgs(t, map[string]any{"m": "x"}), "got an object"},
		{"options not an object", jsArgs(t, "-x^2", 5), "options must be an object"},
		{"options an array", jsArgs(t, "-x^2", []int{1}), "options must be an object"},
		// engine.MaxAxisPoints(2) is 1501: the engine's own limit, not the
		// link format's 4001.
		{"over the engine's limit", jsArgs(t, "-x^2-y^2", map[string]any{"params": []any{map[string]any{"points": 4001}}}), "1 to 1501"},
		{"box too wide", jsArgs(t, "-x^2", map[string]any{"params": []any{map[string]any{"lo": -1e308, "hi": 1e308}}}), "wider than"},
		{"box too narrow", jsArgs(t, "-x^2", map[string]any{"params": []any{map[string]any{"lo": 1, "hi": 1 + 1e-15}}}), "too narrow"},
	}
	for _, c := range cases {
		_, err := APIAnalyse(c.args)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want one containing %q", c.name, err, c.want)
		}
	}
	// The position is the parser's (line 2, after the last character).
	_, err := APIAnalyse(jsArgs(t, "param x\nld_normal(x, 0, 1"))
	if !strings.HasPrefix(err.Error(), "model error at 2:18:") {
		t.Errorf("model error %q, want it at 2:18", err)
	}
	if _, err := APIAnalyse(jsArgs(t, "-x^2", nil)); err != nil {
		t.Errorf("null options: %v", err)
	}
}

func TestAPITimeGrid(t *testing.T) {
	out, err := APITimeGrid(jsArgs(t, "param x in [-20, 20]\nparam y in [-10, 15]\n-x^2/200 - (y + 0.05*x^2 - 5)^2/2\n", 101))
	if err != nil {
		t.Fatal(err)
	}
	var tg TimeGrid
	if err := json.Unmarshal([]byte(out), &tg); err != nil {
		t.Fatal(err)
	}
	if tg.Points != 101*101 || !(tg.MS > 0) {
		t.Errorf("timeGrid %+v", tg)
	}
	for _, c := range []struct {
		args []string
		want error
		text string
	}{
		{jsArgs(t, "-x^2", 10), ErrAPIDim, "two parameters"},
		{jsArgs(t, "-x^2-y^2", 1), ErrAPIArgs, "whole number"},
		{jsArgs(t, "-x^2-y^2", 10.5), ErrAPIArgs, "whole number"},
		{jsArgs(t, "-x^2-y^2", MaxTimeGrid+1), ErrAPIArgs, "whole number"},
		{jsArgs(t, "-x^2-y^2", "10"), ErrAPIArgs, "whole number"},
		{jsArgs(t, "-x^2-y^2"), ErrAPIArgs, "two arguments"},
	} {
		_, err := APITimeGrid(c.args)
		if !errors.Is(err, c.want) || !strings.Contains(err.Error(), c.text) {
			t.Errorf("timeGrid%v: %v, want %v (%q)", c.args, err, c.want, c.text)
		}
	}
	if _, err := APITimeGrid(jsArgs(t, "-x^2-(y", 10)); err == nil || !strings.Contains(err.Error(), "model error at 1:") {
		t.Errorf("model error: %v", err)
	}
}

func TestTimeBoxFollowsTheSupport(t *testing.T) {
	// Box of each support kind, as documented on APITimeGrid.
	m, err := model.Parse("param a in [1, 3]\nparam b in [2, inf]\nparam c in [-inf, 0]\nparam d\na+b+c+d")
	if err != nil {
		t.Fatal(err)
	}
	want := [][2]float64{{1, 3}, {2, 12}, {-10, 0}, {-5, 5}}
	for i, p := range m.Params {
		lo, hi := timeBox(p)
		if lo != want[i][0] || hi != want[i][1] {
			t.Errorf("%s: [%v, %v], want %v", p.Name, lo, hi, want[i])
		}
	}
}

// TestFillCopies: timeGrid's fill sets every element, whatever the length
// (the doubling copies end exactly at the end).
func TestFillCopies(t *testing.T) {
	for n := 0; n <= 70; n++ {
		v := make([]float64, n+1)
		v[n] = -1 // beyond the slice filled
		fillCopies(v[:n], 2.5)
		for i := 0; i < n; i++ {
			if v[i] != 2.5 {
				t.Fatalf("n=%d: element %d = %v", n, i, v[i])
			}
		}
		if v[n] != -1 {
			t.Fatalf("n=%d: wrote past the end", n)
		}
	}
}

// analyse's time bound: max_seconds (default APIDefaultMaxSeconds, 0 for
// none) refuses an analysis forecast to take longer and cancels one that
// overruns, rejecting with ErrAPITime and the reason.
func TestAPIAnalyseTimeBound(t *testing.T) {
	defer func(f AnalyseFunc) { apiAnalyse = f }(apiAnalyse)
	var deadline time.Time
	var hasDeadline bool
	var ctxErr error
	apiAnalyse = func(ctx context.Context, m *model.Model, o engine.Options, pr engine.ProgressFunc) (*engine.Result, error) {
		deadline, hasDeadline = ctx.Deadline()
		if hasDeadline {
			<-ctx.Done() // an analysis that would run on past its bound
			ctxErr = ctx.Err()
			return nil, ctxErr
		}
		return engine.Analyse(ctx, m, o, pr)
	}
	src := "param x\nld_normal(x, 0, 1)\n"

	// Overrunning: cancelled when the bound passes, with a clear message.
	_, err := APIAnalyse(jsArgs(t, src, map[string]any{"max_seconds": 0.5}))
	if !errors.Is(err, ErrAPITime) || !strings.Contains(err.Error(), "stopped after") || !strings.Contains(err.Error(), "max_seconds 0.5") {
		t.Errorf("an overrun: %v", err)
	}
	if !errors.Is(ctxErr, context.DeadlineExceeded) {
		t.Errorf("the overrunning analysis was not cancelled: %v", ctxErr)
	}
	// The default bound is the command line's two minutes.
	start := time.Now()
	apiAnalyse = func(ctx context.Context, m *model.Model, o engine.Options, pr engine.ProgressFunc) (*engine.Result, error) {
		deadline, hasDeadline = ctx.Deadline()
		return engine.Analyse(ctx, m, o, pr)
	}
	if _, err := APIAnalyse(jsArgs(t, src)); err != nil {
		t.Fatal(err)
	}
	if want := start.Add(APIDefaultMaxSeconds * time.Second); !hasDeadline || deadline.Before(want) || deadline.After(want.Add(time.Minute)) {
		t.Errorf("default bound: deadline %v (set %v), want about %v", deadline, hasDeadline, want)
	}
	// 0: no bound.
	if _, err := APIAnalyse(jsArgs(t, src, map[string]any{"max_seconds": 0})); err != nil || hasDeadline {
		t.Errorf("max_seconds 0: error %v, deadline set %v", err, hasDeadline)
	}
	// Forecast beyond the bound: not started. 1501 x 1501 points cannot
	// be evaluated in a millisecond.
	apiAnalyse = func(ctx context.Context, m *model.Model, o engine.Options, pr engine.ProgressFunc) (*engine.Result, error) {
		t.Error("an analysis forecast beyond its bound was started")
		return nil, errors.New("started")
	}
	two := map[string]any{"points": 1501}
	_, err = APIAnalyse(jsArgs(t, "param a\nparam b\nld_normal(a, 0, 1) + ld_normal(b, 0, 1)\n",
		map[string]any{"params": []any{two, two}, "max_seconds": 0.001}))
	if !errors.Is(err, ErrAPITime) || !strings.Contains(err.Error(), "would take") || !strings.Contains(err.Error(), "not started") {
		t.Errorf("a forecast beyond the bound: %v", err)
	}
	// Bad bounds are refused as arguments.
	for _, v := range []any{-1, "10", 1e12, map[string]any{}} {
		_, err := APIAnalyse(jsArgs(t, src, map[string]any{"max_seconds": v}))
		if !errors.Is(err, ErrAPIArgs) || !strings.Contains(err.Error(), "max_seconds") {
			t.Errorf("max_seconds %v: %v", v, err)
		}
	}
}
