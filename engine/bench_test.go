package engine

import (
	"context"
	"os"
	"path/filepath"
	"sort"
	"testing"

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
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		res, err := Analyse(context.Background(), m, opts, nil)
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
}

func BenchmarkAnalyse1DDecayRate(b *testing.B) { benchModel(b, "decay_rate_1d.txt", Options{}) }
func BenchmarkAnalyse2DBanana(b *testing.B)    { benchModel(b, "banana_2d.txt", Options{}) }
func BenchmarkAnalyse3DSensor(b *testing.B)    { benchModel(b, "sensor_3d.txt", Options{}) }
func BenchmarkAnalyse4DRegression(b *testing.B) {
	benchModel(b, "regression_4d.txt", Options{})
}
