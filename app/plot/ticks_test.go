package plot

import (
	"math"
	"testing"
)

func TestNiceStep(t *testing.T) {
	// Steps from the 1-2-5 rule of Heckbert's "nice numbers" (Graphics
	// Gems, 1990), worked by hand.
	cases := []struct {
		lo, hi float64
		n      int
		want   float64
	}{
		{0, 10, 5, 2},
		{0, 1, 5, 0.2},
		{0, 100, 4, 20}, // raw 25 -> 2*10 (25 < sqrt(10)*10)
		{0, 7, 5, 1},    // raw 1.4 -> 1
		{-3.2, 4.9, 6, 1},
		{1e-9, 5e-9, 4, 1e-9},
		{1e6, 1e6 + 30, 3, 10},
		{0, 0.03, 3, 0.01},
	}
	for _, c := range cases {
		got := NiceStep(c.lo, c.hi, c.n)
		if math.Abs(got-c.want) > 1e-12*c.want {
			t.Errorf("NiceStep(%g, %g, %d) = %g, want %g", c.lo, c.hi, c.n, got, c.want)
		}
	}
	if NiceStep(1, 1, 5) != 0 || NiceStep(0, math.Inf(1), 5) != 0 {
		t.Error("empty or infinite ranges should give step 0")
	}
}

func TestTicksAreRoundAndInside(t *testing.T) {
	cases := []struct {
		lo, hi float64
		n      int
		labels []string
	}{
		{-3.2, 4.9, 6, []string{"−3", "−2", "−1", "0", "1", "2", "3", "4"}},
		{0, 1, 5, []string{"0", "0.2", "0.4", "0.6", "0.8", "1"}},
		{0.013, 0.047, 4, []string{"0.02", "0.03", "0.04"}},
		{2e-6, 9e-6, 4, []string{"2e−6", "4e−6", "6e−6", "8e−6"}},
		{1e6 + 3, 1e6 + 28, 3, []string{"1.00001e6", "1.00002e6"}},
	}
	for _, c := range cases {
		ticks := Ticks(c.lo, c.hi, c.n)
		if len(ticks) != len(c.labels) {
			t.Errorf("Ticks(%g, %g, %d): %d ticks %v, want %v", c.lo, c.hi, c.n, len(ticks), ticks, c.labels)
			continue
		}
		step := NiceStep(c.lo, c.hi, c.n)
		for i, tk := range ticks {
			if tk.Label != c.labels[i] {
				t.Errorf("Ticks(%g, %g): label %d = %q, want %q", c.lo, c.hi, i, tk.Label, c.labels[i])
			}
			if tk.Value < c.lo-1e-9*step || tk.Value > c.hi+1e-9*step {
				t.Errorf("tick %g outside [%g, %g]", tk.Value, c.lo, c.hi)
			}
			// A round number: an integer multiple of the step.
			if k := tk.Value / step; math.Abs(k-math.Round(k)) > 1e-6 {
				t.Errorf("tick %g is not a multiple of %g", tk.Value, step)
			}
		}
	}
}

func TestFormatNumber(t *testing.T) {
	cases := []struct {
		v    float64
		sig  int
		want string
	}{
		{math.Pi, 4, "3.142"},
		{-0.0012345, 3, "−0.00123"},
		{123456, 3, "123000"},
		{2.5e-7, 2, "2.5e−7"},
		{6.02e23, 3, "6.02e23"},
		{math.Inf(1), 3, "∞"},
		{math.NaN(), 3, "—"},
		{0, 3, "0"},
	}
	for _, c := range cases {
		if got := FormatNumber(c.v, c.sig); got != c.want {
			t.Errorf("FormatNumber(%g, %d) = %q, want %q", c.v, c.sig, got, c.want)
		}
	}
}

func TestLinear(t *testing.T) {
	s := Linear{D0: -2, D1: 2, R0: 300, R1: 100}
	if s.At(-2) != 300 || s.At(2) != 100 || s.At(0) != 200 {
		t.Errorf("Linear.At wrong: %g %g %g", s.At(-2), s.At(2), s.At(0))
	}
	if v := s.Invert(s.At(1.25)); math.Abs(v-1.25) > 1e-12 {
		t.Errorf("Invert(At(1.25)) = %g", v)
	}
}
