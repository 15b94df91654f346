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

// Where a stencil's log-density bends too much to be interpolated (a
// normal sampled 3 sds apart, a tail that falls to zero, a logarithmic
// spike), upsample's interpolant between two samples stays between them
// (monotoneCubic): no value below zero or below both neighbours, where
// Catmull-Rom's cubic overshot (0.24 of the peak off on the normal, and
// negative values cut to holes), and no worse than it against the
// closed forms: 0.18 of the peak on the normal 3 sds apart, 3.1e-4 on the
// tail (Catmull-Rom: 0.24, 6.6e-4; measured with this test's functions).
func TestUpsampleFallbackStaysBetweenSamples(t *testing.T) {
	cases := []struct {
		name   string
		f      func(x float64) float64
		lo, hi float64
		n      int
		worst  float64
	}{
		{"normal 3 sds apart", func(x float64) float64 { return math.Exp(-x * x / 2) }, -12, 12, 9, 0.19},
		{"a tail falling to zero", func(x float64) float64 {
			if x > 2 {
				return 0
			}
			return math.Exp(-3 * x * x)
		}, -4, 4, 17, 4e-4},
		{"a logarithmic spike", func(x float64) float64 {
			return -math.Log(math.Abs(x-0.01)) * math.Exp(-x*x/2) * b2f(math.Abs(x-0.01) < 1)
		}, -4, 4, 21, 0.35},
	}
	const f = 8
	for _, c := range cases {
		xs := evenly([2]float64{c.lo, c.hi}, c.n)
		v := make([]float64, c.n)
		for i, x := range xs {
			v[i] = c.f(x)
		}
		fine := evenly([2]float64{c.lo, c.hi}, (c.n-1)*f+1)
		out := make([]float64, len(fine))
		newInterpolator(c.n, f).along(v, out)
		peak, worst := 0.0, 0.0
		for i, x := range fine {
			peak = max(peak, c.f(x))
			worst = max(worst, math.Abs(out[i]-c.f(x)))
			lo, hi := v[i/f], v[min(i/f+1, c.n-1)]
			if out[i] < min(lo, hi)-1e-15 || out[i] > max(lo, hi)+1e-15 {
				t.Errorf("%s: %g at x = %g, outside its samples %g and %g", c.name, out[i], x, lo, hi)
				break
			}
		}
		t.Logf("%s: off by %.2g of the peak", c.name, worst/peak)
		if worst > c.worst*peak {
			t.Errorf("%s: off by %.2g of the peak, more than %g", c.name, worst/peak, c.worst)
		}
	}
}

func b2f(b bool) float64 {
	if b {
		return 1
	}
	return 0
}

// Neal's funnel in 2-D (v ~ N(0, 3), x | v ~ N(0, e^(v/2)), normalised):
// its pair image against the closed form at every point. Sampled at 81
// points a side and interpolated, the image was off by half its peak next
// to the neck, where the samples do not resolve the density; the points
// whose interpolation took the monotone cubic are now evaluated
// (evaluateRough).
func TestFunnelPairImage2D(t *testing.T) {
	res := analyseSource(t, "param v\nparam x\nld_normal(v, 0, 3) + ld_normal(x, 0, exp(v/2))\n", Options{Plots: true})
	p := res.Plots.Pairs[0]
	f := func(v, x float64) float64 {
		return math.Exp(-v*v/18) / math.Sqrt(18*math.Pi) * math.Exp(-x*x/(2*math.Exp(v))) / math.Sqrt(2*math.Pi*math.Exp(v))
	}
	peak, worst := 0.0, 0.0
	for b, x := range p.Y {
		for a, v := range p.X {
			want := f(v, x)
			peak = max(peak, want)
			worst = max(worst, math.Abs(p.Density[b*len(p.X)+a]-want))
		}
	}
	t.Logf("%d x %d image off by %.2g of its peak", len(p.X), len(p.Y), worst/peak)
	if !(worst <= 5e-3*peak) {
		t.Errorf("%d x %d image off by %.2g of its peak", len(p.X), len(p.Y), worst/peak)
	}
}
