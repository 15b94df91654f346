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
		step := math.Pi / siSub
		us, ws := unitLegendre(12, step)
		sines := newStepSines(siSub, us, 1)
		for k := 1; k < n; k++ {
			a, s := float64(k-1)*step, 0.0
			for i, u := range us {
				s += ws[i] * sines.at(k-1, i) / (a + u)
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

// unitLegendre returns the n-point Gauss-Legendre rule on [0, step]: the
// tables' steps take it shifted (gonum's rule computed once, not once a
// step: building the tables took 6 ms natively, most of it there, and the
// page's first analysis pays for them).
func unitLegendre(n int, step float64) (us, ws []float64) {
	us, ws = make([]float64, n), make([]float64, n)
	var leg quad.Legendre
	leg.FixedLocations(us, ws, 0, step)
	return us, ws
}

// stepSines gives sin(pi j/p + scale u_i) for the nodes u_i of a rule on
// one step of pi/p (in the units scale turns into radians) by the sum
// formula: sin(pi j/p) repeats every 2p steps, so the tables' sines are
// products of two short tables (within a few units in the last place of
// math.Sin) where a sine a node took most of their time.
type stepSines struct {
	p                int
	sinJ, cosJ       []float64 // of pi j/p, j < 2p
	sinNode, cosNode []float64 // of scale u_i
}

func newStepSines(p int, us []float64, scale float64) stepSines {
	s := stepSines{p: p, sinJ: make([]float64, 2*p), cosJ: make([]float64, 2*p),
		sinNode: make([]float64, len(us)), cosNode: make([]float64, len(us))}
	for j := range s.sinJ {
		s.sinJ[j], s.cosJ[j] = math.Sincos(math.Pi * float64(j) / float64(p))
	}
	for i, u := range us {
		s.sinNode[i], s.cosNode[i] = math.Sincos(scale * u)
	}
	return s
}

// at returns sin(pi j/p + scale u_i).
func (s stepSines) at(j, i int) float64 {
	j %= 2 * s.p
	return s.sinJ[j]*s.cosNode[i] + s.cosJ[j]*s.sinNode[i]
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
