package plot

import (
	"math"
	"strconv"
	"strings"
)

// Tick is one axis tick: its value and its label.
type Tick struct {
	Value float64
	Label string
}

// NiceStep returns a round step (1, 2 or 5 times a power of ten) that cuts
// [lo, hi] into about target intervals. It follows the "nice numbers" idea of
// Heckbert (Graphics Gems, 1990): round the raw step to the closest of
// 1, 2, 5 and 10 on a logarithmic scale.
func NiceStep(lo, hi float64, target int) float64 {
	if target < 1 {
		target = 1
	}
	span := hi - lo
	if !(span > 0) || math.IsInf(span, 0) {
		return 0
	}
	raw := span / float64(target)
	exp := math.Floor(math.Log10(raw))
	base := math.Pow(10, exp)
	f := raw / base // in [1, 10)
	var nice float64
	switch {
	case f < math.Sqrt(2): // geometric midpoint of 1 and 2
		nice = 1
	case f < math.Sqrt(10): // of 2 and 5
		nice = 2
	case f < math.Sqrt(50): // of 5 and 10
		nice = 5
	default:
		nice = 10
	}
	return nice * base
}

// Ticks returns ticks at round numbers inside [lo, hi], about target of them
// (never fewer than two when the range is finite and non-empty). Labels use
// the fewest digits that tell neighbouring ticks apart.
func Ticks(lo, hi float64, target int) []Tick {
	if lo > hi {
		lo, hi = hi, lo
	}
	step := NiceStep(lo, hi, target)
	if step == 0 || math.IsNaN(step) {
		if math.IsNaN(lo) || math.IsInf(lo, 0) {
			return nil
		}
		return []Tick{{Value: lo, Label: FormatTick(lo, 0)}}
	}
	first := math.Ceil(lo/step-1e-9) * step
	var ticks []Tick
	for k := 0; ; k++ {
		v := first + float64(k)*step
		if v > hi+step*1e-9 {
			break
		}
		if math.Abs(v) < step*1e-9 {
			v = 0 // avoid -0 and 1e-17 from rounding
		}
		ticks = append(ticks, Tick{Value: v, Label: FormatTick(v, step)})
		if k > 1000 {
			break
		}
	}
	if len(ticks) < 2 && target < 20 {
		return Ticks(lo, hi, target*2)
	}
	return ticks
}

// FormatTick formats v for an axis whose ticks are step apart: fixed-point
// with just enough decimals, or scientific notation for very large or very
// small magnitudes. A step of 0 formats v with four significant digits.
func FormatTick(v, step float64) string {
	if v == 0 {
		return "0"
	}
	a := max(math.Abs(v), step)
	if step == 0 {
		return FormatNumber(v, 4)
	}
	if a >= 1e5 || a < 1e-3 {
		// Scientific: mantissa digits enough to separate ticks.
		digits := int(math.Floor(math.Log10(math.Abs(v)))) - int(math.Floor(math.Log10(step)))
		if digits < 0 {
			digits = 0
		}
		return sciLabel(strconv.FormatFloat(v, 'e', digits, 64))
	}
	decimals := 0
	if step < 1 {
		decimals = int(math.Ceil(-math.Log10(step) - 1e-9))
	}
	s := strconv.FormatFloat(v, 'f', decimals, 64)
	if strings.Contains(s, ".") {
		s = strings.TrimRight(strings.TrimRight(s, "0"), ".")
	}
	return minus(s)
}

// FormatNumber formats v with sig significant digits, in fixed-point for
// moderate magnitudes and scientific notation otherwise; it writes "∞",
// "−∞" and "—" (for NaN).
func FormatNumber(v float64, sig int) string {
	switch {
	case math.IsNaN(v):
		return "—"
	case math.IsInf(v, 1):
		return "∞"
	case math.IsInf(v, -1):
		return "−∞"
	case v == 0:
		return "0"
	}
	if sig < 1 {
		sig = 1
	}
	a := math.Abs(v)
	if a >= 1e6 || a < 1e-4 {
		return sciLabel(strconv.FormatFloat(v, 'e', sig-1, 64))
	}
	mag := int(math.Floor(math.Log10(a)))
	decimals := sig - 1 - mag
	if decimals < 0 {
		// Round to sig significant digits left of the point.
		p := math.Pow(10, float64(-decimals))
		v = math.Round(v/p) * p
		decimals = 0
	}
	s := strconv.FormatFloat(v, 'f', decimals, 64)
	return minus(s)
}

// sciLabel turns Go's "1.5e-07" into "1.5e−7".
func sciLabel(s string) string {
	mant, exp, ok := strings.Cut(s, "e")
	if !ok {
		return minus(s)
	}
	sign := ""
	if strings.HasPrefix(exp, "-") {
		sign = "−"
	}
	exp = strings.TrimLeft(exp, "+-0")
	if exp == "" {
		exp = "0"
	}
	return minus(mant) + "e" + sign + exp
}

// minus replaces a leading hyphen by a true minus sign.
func minus(s string) string {
	if strings.HasPrefix(s, "-") {
		return "−" + s[1:]
	}
	return s
}
