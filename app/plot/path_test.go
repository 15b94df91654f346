package plot

import (
	"math"
	"math/rand/v2"
	"strconv"
	"testing"
)

// TestCoordMatchesStrconv checks the path's number writer against Go's
// strconv (an independent implementation of the shortest form): a value
// rounded to hundredths and written with FormatFloat(..., 'f', -1, 64),
// negative zero as "0".
func TestCoordMatchesStrconv(t *testing.T) {
	want := func(v float64) string {
		s := strconv.FormatFloat(math.Round(v*100)/100, 'f', -1, 64)
		if s == "-0" {
			return "0"
		}
		return s
	}
	vals := []float64{0, math.Copysign(0, -1), -0.001, 0.004999, 0.005, -0.005, 0.01, 0.1, 0.15, 1, 1.5, 12.34, -12.345, 99.995,
		480, -480.5, 1e9 + 0.25, -1e10 + 0.5, 1e10, 3e12, math.Inf(1), math.Inf(-1), math.NaN(), 123456.789}
	r := rand.New(rand.NewPCG(1, 2))
	for range 200000 {
		// Plot coordinates (0 to 500), and values over many magnitudes.
		vals = append(vals, r.Float64()*520-10, (r.Float64()-0.5)*math.Pow(10, float64(r.IntN(14)-3)))
	}
	for _, v := range vals {
		if got := string(appendCoord(nil, v)); got != want(v) {
			t.Fatalf("coordinate %v: %q, want %q", v, got, want(v))
		}
	}
}
