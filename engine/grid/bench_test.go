package grid

import "testing"

// BenchmarkEvaluateBanana evaluates and summarises the twisted Gaussian on
// the default 301 x 301 grid (the density itself is a cheap Go function).
func BenchmarkEvaluateBanana(b *testing.B) {
	p := &funcDensity{d: 2, f: func(x []float64) float64 {
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
	p := &funcDensity{d: 2, f: func(x []float64) float64 {
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
