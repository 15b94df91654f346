//go:build js && wasm

// Command gridwasm is the benchmark harness's WebAssembly probe: it exposes
// bellcheckBenchGrid(model, n, reps) on window, which compiles a model text
// with the engine and times LogDensityBlock over an n x n grid of the box
// [-20, 20] x [-10, 15] (the box of engine/eval's banana benchmark, at the
// cells' centres). It measures the engine in the browser's WebAssembly
// apart from the page.
package main

import (
	"errors"
	"math"
	"time"

	"github.com/hack-pad/safejs"

	"bellcheck/engine/eval"
	"bellcheck/engine/model"
)

// gridColumns returns the centres of the n x n cells as columns (x varies
// slowest), as testdata/bench/density.js builds them.
func gridColumns(n int) [][]float64 {
	xs := make([]float64, n*n)
	ys := make([]float64, n*n)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			xs[i*n+j] = -20 + 40*(float64(i)+0.5)/float64(n)
			ys[i*n+j] = -10 + 25*(float64(j)+0.5)/float64(n)
		}
	}
	return [][]float64{xs, ys}
}

// benchGrid compiles src and evaluates it reps times over the grid; it
// returns the fastest time per point in nanoseconds and the sum of the
// finite values of the last pass (a checksum against other evaluators).
func benchGrid(src string, n, reps int) (nsPerPoint, sum float64, err error) {
	m, err := model.Parse(src)
	if err != nil {
		return 0, 0, err
	}
	ev, err := eval.Compile(m)
	if err != nil {
		return 0, 0, err
	}
	if ev.Dim() != 2 {
		return 0, 0, errors.New("the grid benchmark needs a model of two parameters")
	}
	cols := gridColumns(n)
	out := make([]float64, n*n)
	best := math.Inf(1)
	for r := 0; r < reps; r++ {
		t0 := time.Now()
		ev.LogDensityBlock(cols, out)
		best = math.Min(best, float64(time.Since(t0).Nanoseconds()))
	}
	for _, v := range out {
		if !math.IsNaN(v) && !math.IsInf(v, 0) {
			sum += v
		}
	}
	return best / float64(n*n), sum, nil
}

func main() {
	fn, err := safejs.FuncOf(func(this safejs.Value, args []safejs.Value) any {
		if len(args) != 3 {
			return map[string]any{"error": "want (model, n, reps)"}
		}
		src, err1 := args[0].String()
		n, err2 := args[1].Int()
		reps, err3 := args[2].Int()
		if err := errors.Join(err1, err2, err3); err != nil {
			return map[string]any{"error": err.Error()}
		}
		ns, sum, err := benchGrid(src, n, reps)
		if err != nil {
			return map[string]any{"error": err.Error()}
		}
		return map[string]any{"ns_per_point": ns, "sum": sum}
	})
	if err != nil {
		panic(err)
	}
	if err := safejs.Global().Set("bellcheckBenchGrid", fn.Value()); err != nil {
		panic(err)
	}
	select {}
}
