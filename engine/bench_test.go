package engine

import (
	"context"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"runtime/debug"
	"sort"
	"sync"
	"testing"
	"time"

	"bellcheck/engine/model"
)

// The benchmarks time the whole analysis (box, grid with its error
// estimate, modes, the four fits, comparison, diagnostics; no plots) on the
// models in testdata/reference/bench, and report each stage's share of the
// time as custom metrics (percent).
func benchModel(b *testing.B, file string, opts Options) {
	src, err := os.ReadFile(filepath.Join("..", "testdata", "reference", "bench", file))
	if err != nil {
		b.Fatal(err)
	}
	m, err := model.Parse(string(src))
	if err != nil {
		b.Fatal(err)
	}
	stages := map[string]float64{}
	total := 0.0
	var last time.Time
	maxGap := 0.0
	progress := func(Progress) {
		now := time.Now()
		if !last.IsZero() {
			maxGap = math.Max(maxGap, float64(now.Sub(last))/float64(time.Millisecond))
		}
		last = now
	}
	// The collector's target the programs set (GCPercent).
	defer debug.SetGCPercent(debug.SetGCPercent(GCPercent))
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		last = time.Time{}
		res, err := Analyse(context.Background(), m, opts, progress)
		if err != nil {
			b.Fatal(err)
		}
		for k, v := range res.Timing.Stages {
			stages[k] += v
		}
		total += res.Timing.Total
	}
	b.StopTimer()
	names := make([]string, 0, len(stages))
	for k := range stages {
		names = append(names, k)
	}
	sort.Strings(names)
	for _, k := range names {
		b.ReportMetric(100*stages[k]/total, k+"_%")
	}
	b.ReportMetric(maxGap, "max_progress_gap_ms")
}

// BenchmarkCancelLatency measures the time from a cancel, issued by a timer
// at a different moment of a 4-D analysis each time, to Analyse's return
// (worst case over the runs).
func BenchmarkCancelLatency(b *testing.B) {
	if runtime.GOOS == "js" {
		// WebAssembly is not preemptive: a timer cannot interrupt the
		// analysis; the page cancels from inside the progress callback.
		b.Skip("no preemption under js/wasm")
	}
	src, err := os.ReadFile(filepath.Join("..", "testdata", "reference", "bench", "counts_4d.txt"))
	if err != nil {
		b.Fatal(err)
	}
	m, err := model.Parse(string(src))
	if err != nil {
		b.Fatal(err)
	}
	worst := 0.0
	for i := 0; i < b.N; i++ {
		ctx, cancel := context.WithCancel(context.Background())
		var at time.Time
		var mu sync.Mutex
		delay := time.Duration(5+(i*37)%400) * time.Millisecond
		timer := time.AfterFunc(delay, func() {
			mu.Lock()
			at = time.Now()
			mu.Unlock()
			cancel()
		})
		_, err := Analyse(ctx, m, Options{}, nil)
		end := time.Now()
		timer.Stop()
		cancel()
		mu.Lock()
		if err != nil && !at.IsZero() {
			worst = math.Max(worst, float64(end.Sub(at))/float64(time.Millisecond))
		}
		mu.Unlock()
	}
	b.ReportMetric(worst, "worst_ms")
}

// Bounded parameters are fitted on the log scale, so that every fit exists
// (on the identity scale the reverse-KL fits do not: KL(q||p) is infinite).
// It is their default now; named here, the benchmarks do not move with it.
var logScale = ParamOptions{Scale: Log}

func BenchmarkAnalyse1DDecayRate(b *testing.B) {
	benchModel(b, "decay_rate_1d.txt", Options{Params: []ParamOptions{logScale}})
}
func BenchmarkAnalyse2DBanana(b *testing.B) { benchModel(b, "banana_2d.txt", Options{}) }
func BenchmarkAnalyse3DSensor(b *testing.B) {
	benchModel(b, "sensor_3d.txt", Options{Params: []ParamOptions{{}, logScale}})
}
func BenchmarkAnalyse4DCounts(b *testing.B) { benchModel(b, "counts_4d.txt", Options{}) }

// The Gaussian chains of the reference tests: cheap densities, so these
// time the engine's own work.
func BenchmarkAnalyse3DGaussian(b *testing.B) { benchModel(b, "../gauss3d.txt", Options{}) }
func BenchmarkAnalyse4DGaussian(b *testing.B) { benchModel(b, "../gauss4d.txt", Options{}) }

// Funnels (a location and a scale parameter together) stretch the box over
// faint tails; the analysis narrows it and evaluates the grid again.
func BenchmarkAnalyse3DFunnel(b *testing.B) {
	skipSlowWasm(b)
	benchModel(b, "funnel_3d.txt", Options{Params: []ParamOptions{{}, logScale, logScale}})
}
func BenchmarkAnalyse4DFunnel(b *testing.B) {
	skipSlowWasm(b)
	benchModel(b, "funnel_4d.txt", Options{Params: []ParamOptions{{}, {}, {}, logScale}})
}

// The gallery's Lorenz-63 examples (app/examples, whose tests check that
// these files hold their texts): the starting state of a chaotic system
// from readings over a short and over a long window, on the examples'
// options (a grid of 61 points a side over the whole support). Every
// evaluation integrates the system over the whole window.
var lorenzAxes = []ParamOptions{
	{Points: 61, Lo: ptr(-4), Hi: ptr(12)},
	{Points: 61, Lo: ptr(-3), Hi: ptr(13)},
	{Points: 61, Lo: ptr(5), Hi: ptr(21)},
}

func BenchmarkAnalyse3DLorenzShort(b *testing.B) {
	benchModel(b, "lorenz_short_3d.txt", Options{Params: lorenzAxes})
}
func BenchmarkAnalyse3DLorenzLong(b *testing.B) {
	benchModel(b, "lorenz_long_3d.txt", Options{Params: lorenzAxes})
}

// The long window with the plots, as the page asks for them.
func BenchmarkPlots3DLorenzLong(b *testing.B) {
	benchModel(b, "lorenz_long_3d.txt", Options{Plots: true, Params: lorenzAxes})
}

// skipSlowWasm keeps the funnels (several seconds natively) out of the
// WebAssembly runs of make bench.
func skipSlowWasm(b *testing.B) {
	if runtime.GOOS == "js" {
		b.Skip("slow under js/wasm; run natively")
	}
}

// The same analyses with the plots (the page asks for them): with the
// nested rule on, every plot point is a nested rule over the other
// parameters (plots_rule.go).
func BenchmarkPlots2DBanana(b *testing.B) { benchModel(b, "banana_2d.txt", Options{Plots: true}) }
func BenchmarkPlots3DSensor(b *testing.B) {
	benchModel(b, "sensor_3d.txt", Options{Plots: true, Params: []ParamOptions{{}, logScale}})
}
func BenchmarkPlots4DCounts(b *testing.B) { benchModel(b, "counts_4d.txt", Options{Plots: true}) }
