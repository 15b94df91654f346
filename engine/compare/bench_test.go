package compare

import (
	"context"
	"testing"

	"gonum.org/v1/gonum/mat"

	"bellcheck/engine/gauss"
	"bellcheck/engine/grid"
)

// BenchmarkCompareBanana compares four Gaussians with the twisted Gaussian
// on the default 301 x 301 grid.
func BenchmarkCompareBanana(b *testing.B) {
	p := bananaDensity()
	g, err := grid.Evaluate(context.Background(), p, grid.Box{Lo: []float64{-61, -161}, Hi: []float64{61, 18}}, grid.Settings{})
	if err != nil {
		b.Fatal(err)
	}
	qs := prepared(b,
		gauss.Gaussian{Mean: []float64{0, 5}, Cov: mat.NewSymDense(2, []float64{100, 0, 0, 1})},
		gauss.Gaussian{Mean: []float64{0, 3}, Cov: mat.NewSymDense(2, []float64{30, 0, 0, 4})},
		gauss.Gaussian{Mean: []float64{0, 3}, Cov: mat.NewSymDense(2, []float64{20, 0, 0, 3})},
		gauss.Gaussian{Mean: []float64{0, 0}, Cov: mat.NewSymDense(2, []float64{100, 0, 0, 51})},
	)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := Compare(g, qs, Settings{Density: p}); err != nil {
			b.Fatal(err)
		}
	}
}
