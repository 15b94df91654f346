package engine

import (
	"math"
	"testing"
)

// smoothPair refines a grid's pair image by cubic interpolation, keeping
// its layout (y-major): on a product of normal densities (closed form)
// sampled a quarter of an sd apart, the refined image keeps the samples
// where they were and is the density to rounding everywhere (its logarithm
// is interpolated, and Catmull-Rom's cubic is exact for a quadratic; with
// the density itself interpolated it was off by 6.3e-4 of the peak), and
// an unevenly spaced axis (a log-scale parameter's) is left as it was.
func TestSmoothPair(t *testing.T) {
	f := func(x, y float64) float64 { return math.Exp(-x*x/2-(y-1)*(y-1)/(2*1.5*1.5)) / (2 * math.Pi * 1.5) }
	m2 := Marginal2D{X: evenly([2]float64{-4, 4}, 33), Y: evenly([2]float64{-5, 7}, 33)}
	for _, y := range m2.Y {
		for _, x := range m2.X {
			m2.Density = append(m2.Density, f(x, y))
		}
	}
	orig := m2
	smoothPair(&m2)
	if len(m2.X) < pairShown || len(m2.Y) < pairShown || len(m2.Density) != len(m2.X)*len(m2.Y) {
		t.Fatalf("refined to %d x %d with %d values", len(m2.X), len(m2.Y), len(m2.Density))
	}
	peak, worst := f(0, 1), 0.0
	for b, y := range m2.Y {
		for a, x := range m2.X {
			worst = math.Max(worst, math.Abs(m2.Density[b*len(m2.X)+a]-f(x, y)))
		}
	}
	t.Logf("refined image off the density by %.2g of its peak at most", worst/peak)
	if worst > 1e-12*peak {
		t.Errorf("refined image off the density by %.2g of its peak", worst/peak)
	}
	step := (len(m2.X) - 1) / (len(orig.X) - 1)
	for b := range orig.Y {
		for a := range orig.X {
			if got, want := m2.Density[b*step*len(m2.X)+a*step], orig.Density[b*len(orig.X)+a]; math.Abs(got-want) > 1e-15 {
				t.Fatalf("sample (%d, %d) moved from %g to %g", a, b, want, got)
			}
		}
	}
	uneven := Marginal2D{X: []float64{1, 2, 4, 8, 16}, Y: evenly([2]float64{0, 1}, 5), Density: make([]float64, 25)}
	smoothPair(&uneven)
	if len(uneven.X) != 5 || len(uneven.Y) != 5 {
		t.Errorf("an unevenly spaced axis was refined")
	}
}
