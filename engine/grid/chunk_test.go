package grid

import (
	"context"
	"errors"
	"math"
	"testing"
	"time"

	"bellcheck/engine/internal/targettest"
)

// A costly density is called on chunks of a block, so that progress and
// cancellation come every few milliseconds; every node is still evaluated
// exactly once, with the value a point evaluation gives.
func TestEvaluateChunksCostlyDensity(t *testing.T) {
	calls := 0
	f := func(x []float64) float64 { return -(x[0]*x[0] + 2*x[1]*x[1]) / 2 }
	p := &targettest.Func{D: 2, LogP: func(x []float64) float64 {
		calls++
		time.Sleep(100 * time.Microsecond)
		return f(x)
	}}
	reports := 0
	g, err := Evaluate(context.Background(), p, Box{Lo: []float64{-5, -4}, Hi: []float64{5, 4}},
		Settings{Points: []int{11, 11}, Progress: func(float64) { reports++ }})
	if err != nil {
		t.Fatal(err)
	}
	if calls != g.Size() {
		t.Errorf("%d evaluations for %d nodes", calls, g.Size())
	}
	x := make([]float64, 2)
	for i, v := range g.LogP {
		g.Point(i, x)
		if want := f(x); v != want || math.IsNaN(v) {
			t.Fatalf("node %d at %v: %g, want %g", i, x, v, want)
		}
	}
	// 121 nodes at 0.1 ms or more each (sleeps round up): one block, cut
	// into chunks of about 4 ms, each followed by a report.
	if reports < 5 {
		t.Errorf("%d progress reports", reports)
	}
	// Cancelled while evaluating, it stops within a chunk.
	ctx, cancel := context.WithCancel(context.Background())
	calls = 0
	_, err = Evaluate(ctx, p, Box{Lo: []float64{-5, -4}, Hi: []float64{5, 4}},
		Settings{Points: []int{11, 11}, Progress: func(float64) { cancel() }})
	if !errors.Is(err, context.Canceled) || calls >= g.Size() {
		t.Errorf("cancelled: err %v after %d of %d evaluations", err, calls, g.Size())
	}
}
