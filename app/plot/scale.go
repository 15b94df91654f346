package plot

import "math"

// Linear maps the domain [D0, D1] onto the range [R0, R1] linearly. R1 may be
// less than R0 (a y axis drawn downwards).
type Linear struct {
	D0, D1 float64
	R0, R1 float64
}

// At maps a domain value to the range.
func (s Linear) At(v float64) float64 {
	if s.D1 == s.D0 {
		return (s.R0 + s.R1) / 2
	}
	return s.R0 + (v-s.D0)*(s.R1-s.R0)/(s.D1-s.D0)
}

// Invert maps a range value back to the domain.
func (s Linear) Invert(r float64) float64 {
	if s.R1 == s.R0 {
		return (s.D0 + s.D1) / 2
	}
	return s.D0 + (r-s.R0)*(s.D1-s.D0)/(s.R1-s.R0)
}

// Extent returns the smallest and largest finite values of the slices, and
// false when there is none.
func Extent(vs ...[]float64) (lo, hi float64, ok bool) {
	lo, hi = math.Inf(1), math.Inf(-1)
	for _, v := range vs {
		for _, x := range v {
			if math.IsNaN(x) || math.IsInf(x, 0) {
				continue
			}
			lo = min(lo, x)
			hi = max(hi, x)
		}
	}
	return lo, hi, lo <= hi
}
