package quadrature

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/integrate/quad"
)

// siSeries is the sine integral by its power series, Si(x) = sum_n
// (-1)^n x^(2n+1) / ((2n+1) (2n+1)!) (Abramowitz and Stegun 5.2.14), summed
// until the terms fall below 1e-17 of the sum: exact to rounding for x up
// to about 8, where the largest term is below 1e3.
func siSeries(x float64) float64 {
	term, sum := x, x
	for n := 1; n < 100; n++ {
		term *= -x * x / float64((2*n)*(2*n+1))
		t := term / float64(2*n+1)
		sum += t
		if math.Abs(t) < 1e-17*math.Abs(sum) {
			break
		}
	}
	return sum
}

// The sine integral's tables (siPiFrac's and siPi's), built step by step
// with sines from a sum formula, against the power series for small
// arguments and, further out, against gonum's Gauss-Legendre rule over
// the whole interval in pieces of length pi (an independent integration).
func TestSineIntegralTables(t *testing.T) {
	whole := func(x float64) float64 {
		var s float64
		for a := 0.0; a < x; a += math.Pi {
			s += quad.Fixed(func(u float64) float64 { return math.Sin(u) / u }, a, math.Min(a+math.Pi, x), 24, quad.Legendre{}, 0)
		}
		return s
	}
	for _, m := range []int{1, 3, 8, 13, 20} { // pi m/8 up to 7.9
		x := math.Pi * float64(m) / siSub
		if got, want := siPiFrac(m), siSeries(x); math.Abs(got-want) > 1e-14 {
			t.Errorf("Si(%g) = %.17g, series %.17g", x, got, want)
		}
	}
	for _, m := range []int{57, 300, 2049, siSub*siMax - 1} {
		x := math.Pi * float64(m) / siSub
		if got, want := siPiFrac(m), whole(x); math.Abs(got-want) > 1e-13 {
			t.Errorf("Si(%g) = %.17g, Gauss-Legendre %.17g", x, got, want)
		}
	}
	// siPi interpolates its finer table (error bound 4e-9, see siPi).
	for _, x := range []float64{0.01, 0.3, 1.7, 2.5, 12.34, 77.7, 159.9} {
		want := whole(math.Pi * x)
		if x < 2.5 {
			want = siSeries(math.Pi * x)
		}
		if got := siPi(x); math.Abs(got-want) > 4e-9 {
			t.Errorf("Si(pi %g) = %.17g, want %.17g", x, got, want)
		}
		if got := siPi(-x); math.Abs(got+want) > 4e-9 {
			t.Errorf("Si(-pi %g) = %.17g, want %.17g", x, got, -want)
		}
	}
}
