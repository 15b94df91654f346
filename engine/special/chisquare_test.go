package special

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// TestChiSquareAgainstGonum compares the closed-form CDF and its inverse with
// gonum's stat/distuv ChiSquared, an independent implementation (regularised
// incomplete gamma), for the dimensions bellcheck uses and beyond.
func TestChiSquareAgainstGonum(t *testing.T) {
	for d := 1; d <= 7; d++ {
		ref := distuv.ChiSquared{K: float64(d)}
		for _, x := range []float64{1e-6, 0.01, 0.3, 1, 2.5, 5, 9.49, 20, 60} {
			if got, want := ChiSquareCDF(d, x), ref.CDF(x); math.Abs(got-want) > 1e-13 {
				t.Errorf("ChiSquareCDF(%d, %v) = %v, gonum %v", d, x, got, want)
			}
		}
		for _, p := range []float64{0.01, 0.5, 0.95, 0.999} {
			if got, want := ChiSquareQuantile(d, p), ref.Quantile(p); math.Abs(got-want) > 1e-9*want {
				t.Errorf("ChiSquareQuantile(%d, %v) = %v, gonum %v", d, p, got, want)
			}
		}
	}
	// Closed forms: d = 2 is exponential with mean 2, so the 0.95 quantile
	// is -2 log 0.05; d = 1 is the square of a standard normal, whose 0.975
	// quantile is sqrt(2) erfinv(0.95).
	if got, want := ChiSquareQuantile(2, 0.95), -2*math.Log(0.05); math.Abs(got-want) > 1e-12 {
		t.Errorf("d=2: %v, want %v", got, want)
	}
	z := math.Sqrt2 * math.Erfinv(0.95)
	if got := ChiSquareQuantile(1, 0.95); math.Abs(got-z*z) > 1e-12 {
		t.Errorf("d=1: %v, want %v", got, z*z)
	}
	for _, bad := range []struct {
		d int
		p float64
	}{{0, 0.5}, {3, 0}, {3, 1}, {3, math.NaN()}} {
		if !math.IsNaN(ChiSquareQuantile(bad.d, bad.p)) {
			t.Errorf("ChiSquareQuantile(%d, %v) is not NaN", bad.d, bad.p)
		}
	}
}
