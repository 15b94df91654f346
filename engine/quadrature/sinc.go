package quadrature

import (
	"math"
	"sync"

	"gonum.org/v1/gonum/integrate/quad"
)

// The sine integral Si(pi x) at x = m/siSub, |x| < siMax: more than the
// nodes of any walk (2 MaxT/h + 1 with the defaults is 129).
const (
	siSub = 8
	siMax = 1024
)

var (
	siOnce  sync.Once
	siTable []float64
)

// siPiFrac returns Si(pi m / siSub), the integral of sin(x)/x over [0, pi
// m/siSub], from a table built by a 12-point Gauss-Legendre rule on each
// step of pi/siSub (a smooth piece of the integrand: exact to rounding).
// Beyond the table it returns the limit pi/2 with the sign of m (the
// remainder is below 1/(pi |x|) < 1e-3 there, and alternates).
func siPiFrac(m int) float64 {
	siOnce.Do(func() {
		n := siSub * siMax
		siTable = make([]float64, n)
		xs, ws := make([]float64, 12), make([]float64, 12)
		var leg quad.Legendre
		step := math.Pi / siSub
		for k := 1; k < n; k++ {
			leg.FixedLocations(xs, ws, float64(k-1)*step, float64(k)*step)
			s := 0.0
			for i, x := range xs {
				s += ws[i] * math.Sin(x) / x
			}
			siTable[k] = siTable[k-1] + s
		}
	})
	sign := 1.0
	if m < 0 {
		m, sign = -m, -1
	}
	if m >= len(siTable) {
		return sign * math.Pi / 2
	}
	return sign * siTable[m]
}

// sincAt returns, at t = (k + f/siSub) h, the sinc interpolant of the
// values g at t_i = i h and its integral from -inf:
// g(t) = sum_i g_i sinc((t - t_i)/h), C(t) = h sum_i g_i (1/2 + Si(pi (t -
// t_i)/h)/pi).
//
// sin(pi m/siSub) = (-1)^(k-i) sin(pi f/siSub) for m = (k-i) siSub + f: one
// sine a call, as in Curve.Density (math.Sin is pure Go under WebAssembly).
func sincAt(g []float64, h float64, k, f int) (val, cum float64) {
	sinF := math.Sin(math.Pi * float64(f) / siSub)
	for i, gi := range g {
		m := (k-i)*siSub + f
		cum += gi * (0.5 + siPiFrac(m)/math.Pi)
		if m == 0 {
			val += gi
			continue
		}
		x := math.Pi * float64(m) / siSub
		if (k-i)&1 == 0 {
			val += gi * sinF / x
		} else {
			val -= gi * sinF / x
		}
	}
	return val, h * cum
}
