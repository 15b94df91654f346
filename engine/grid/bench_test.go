package grid

import (
	"testing"

	"bellcheck/engine/internal/targettest"
)

// BenchmarkEvaluateBanana evaluates and summarises the twisted Gaussian on
// the default 301 x 301 grid (the density itself is a cheap Go function).
func BenchmarkEvaluateBanana(b *testing.B) {
	p := &targettest.Func{D: 2, LogP: func(x []float64) float64 {
		u := x[1] + 0.05*x[0]*x[0] - 5
		return -x[0]*x[0]/200 - u*u/2
	}}
	box := Box{Lo: []float64{-61, -161}, Hi: []float64{61, 18}}
	for i := 0; i < b.N; i++ {
		if _, err := Evaluate(ctx, p, box, Settings{}); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkPeaksBanana finds the basins on the same grid.
func BenchmarkPeaksBanana(b *testing.B) {
	p := &targettest.Func{D: 2, LogP: func(x []float64) float64 {
		u := x[1] + 0.05*x[0]*x[0] - 5
		return -x[0]*x[0]/200 - u*u/2
	}}
	g, err := Evaluate(ctx, p, Box{Lo: []float64{-61, -161}, Hi: []float64{61, 18}}, Settings{})
	if err != nil {
		b.Fatal(err)
	}
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := g.Peaks(ctx, nil); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkEvaluate1D evaluates and summarises a normal density on the
// default 2001-point grid.
func BenchmarkEvaluate1D(b *testing.B) {
	p := &targettest.Func{D: 1, LogP: func(x []float64) float64 { return -x[0] * x[0] / 2 }}
	box := Box{Lo: []float64{-7}, Hi: []float64{7}}
	for i := 0; i < b.N; i++ {
		if _, err := Evaluate(ctx, p, box, Settings{}); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkFindBox1D searches the box of a normal density.
func BenchmarkFindBox1D(b *testing.B) {
	p := &targettest.Func{D: 1, LogP: func(x []float64) float64 { return -(x[0] - 3) * (x[0] - 3) / 2 }}
	for i := 0; i < b.N; i++ {
		if _, err := FindBox(ctx, p, BoxSettings{Bounds: unbounded(1)}); err != nil {
			b.Fatal(err)
		}
	}
}
