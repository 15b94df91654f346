package fit

import (
	"math"

	"bellcheck/engine/internal/targettest"
)

// Test densities: small hand-written log-densities with analytic gradients
// and Hessians, standing in for compiled models.

// fnDensity is a density given by a function that writes log p, its
// gradient and Hessian.
type fnDensity = targettest.Func

func newFn(d int, fn func(x, g, h []float64) float64) *fnDensity {
	return &targettest.Func{D: d, Derivs: fn}
}

// gaussianTarget is log p = c - (1/2)(x-m)ᵀ P (x-m), with
// log Z = c + (d/2) log 2pi - (1/2) log det P.
func gaussianTarget(mean, prec []float64, c float64) *fnDensity {
	d := len(mean)
	return newFn(d, func(x, g, h []float64) float64 {
		q := 0.0
		for i := 0; i < d; i++ {
			gi := 0.0
			for j := 0; j < d; j++ {
				gi -= prec[i*d+j] * (x[j] - mean[j])
				h[i*d+j] = -prec[i*d+j]
			}
			g[i] = gi
			q -= (x[i] - mean[i]) * gi
		}
		return c - 0.5*q
	})
}

// oneD builds a 1-D density from log p and its first two derivatives.
func oneD(fn func(x float64) (f, g, h float64)) *fnDensity {
	return newFn(1, func(x, g, h []float64) float64 {
		f, gg, hh := fn(x[0])
		g[0], h[0] = gg, hh
		return f
	})
}

// quartic is log p = -x^4/4.
func quartic() *fnDensity {
	return oneD(func(x float64) (float64, float64, float64) {
		return -x * x * x * x / 4, -x * x * x, -3 * x * x
	})
}

// sextic is log p = -x^6/6.
func sextic() *fnDensity {
	return oneD(func(x float64) (float64, float64, float64) {
		x2 := x * x
		return -x2 * x2 * x2 / 6, -x2 * x2 * x, -5 * x2 * x2
	})
}

// powerExp is log p = n log x - x on x > 0 (-Inf elsewhere): x^n e^-x,
// whose integral is Gamma(n+1) = n!.
func powerExp(n float64) *fnDensity {
	return oneD(func(x float64) (float64, float64, float64) {
		if x <= 0 {
			return math.Inf(-1), 0, 0
		}
		return n*math.Log(x) - x, n/x - 1, -n / (x * x)
	})
}

// expDecay is log p = -x on x >= 0 (-Inf elsewhere): its mode is on the
// bound x = 0.
func expDecay() *fnDensity {
	return oneD(func(x float64) (float64, float64, float64) {
		if x < 0 {
			return math.Inf(-1), 0, 0
		}
		return -x, -1, 0
	})
}

// logGamma is the Gamma(a, rate b) density of x written for y = log x with
// the Jacobian: log p(y) = a y - b e^y. Its integral is Gamma(a) / b^a and
// its mean is digamma(a) - log b.
func logGamma(a, b float64) *fnDensity {
	return oneD(func(y float64) (float64, float64, float64) {
		e := b * math.Exp(y)
		return a*y - e, a - e, -e
	})
}

// mixture is log sum_k w_k N(x; m_k, s² I) in len(m[0]) dimensions.
func mixture(w []float64, m [][]float64, s float64) *fnDensity {
	d := len(m[0])
	K := len(w)
	l := make([]float64, K)
	gk := make([]float64, K*d)
	return newFn(d, func(x, g, h []float64) float64 {
		top := math.Inf(-1)
		for k := 0; k < K; k++ {
			q := 0.0
			for i := 0; i < d; i++ {
				r := x[i] - m[k][i]
				q += r * r
				gk[k*d+i] = -r / (s * s)
			}
			l[k] = math.Log(w[k]) - q/(2*s*s) - 0.5*float64(d)*math.Log(2*math.Pi*s*s)
			top = math.Max(top, l[k])
		}
		sum := 0.0
		for k := 0; k < K; k++ {
			l[k] = math.Exp(l[k] - top)
			sum += l[k]
		}
		for i := range g {
			g[i] = 0
		}
		for i := range h {
			h[i] = 0
		}
		for k := 0; k < K; k++ {
			r := l[k] / sum
			for i := 0; i < d; i++ {
				g[i] += r * gk[k*d+i]
				for j := 0; j < d; j++ {
					h[i*d+j] += r * gk[k*d+i] * gk[k*d+j]
				}
				h[i*d+i] -= r / (s * s)
			}
		}
		for i := 0; i < d; i++ {
			for j := 0; j < d; j++ {
				h[i*d+j] -= g[i] * g[j]
			}
		}
		return top + math.Log(sum)
	})
}

// banana is the twisted Gaussian of Haario, Saksman and Tamminen (1999):
// log p = -x²/200 - (y + b x² - 100 b)²/2; with b = 0.05 it is
// -x^2/200 - (y + 0.05 x^2 - 5)^2/2.
func banana(b float64) *fnDensity {
	return newFn(2, func(v, g, h []float64) float64 {
		x, y := v[0], v[1]
		r := y + b*x*x - 100*b
		g[0] = -x/100 - r*2*b*x
		g[1] = -r
		h[0] = -1.0/100 - 2*b*r - 4*b*b*x*x
		h[1] = -2 * b * x
		h[2] = h[1]
		h[3] = -1
		return -x*x/200 - r*r/2
	})
}

// logisticLike is a logistic-regression log-posterior in (intercept,
// slope) with a N(0, tau²) prior on each: sum_i [y_i eta_i -
// log(1 + e^eta_i)] - |beta|²/(2 tau²), eta_i = beta_0 + beta_1 t_i. The
// design points and outcomes are arbitrary; the tests using it check
// identities only. It is log-concave.
func logisticLike(t, yv []float64, tau float64) *fnDensity {
	return newFn(2, func(b, g, h []float64) float64 {
		f := -(b[0]*b[0] + b[1]*b[1]) / (2 * tau * tau)
		g[0], g[1] = -b[0]/(tau*tau), -b[1]/(tau*tau)
		h[0], h[1], h[2], h[3] = -1/(tau*tau), 0, 0, -1/(tau*tau)
		for i, ti := range t {
			eta := b[0] + b[1]*ti
			// log(1 + e^eta) without overflow
			sp := math.Max(eta, 0) + math.Log1p(math.Exp(-math.Abs(eta)))
			sig := 1 / (1 + math.Exp(-eta))
			f += yv[i]*eta - sp
			r := yv[i] - sig
			g[0] += r
			g[1] += r * ti
			w := sig * (1 - sig)
			h[0] -= w
			h[1] -= w * ti
			h[3] -= w * ti * ti
		}
		h[2] = h[1]
		return f
	})
}

// smallLogistic has eight observations: a wide, skewed posterior.
func smallLogistic() *fnDensity {
	return logisticLike([]float64{-2, -1.2, -0.5, 0, 0.4, 1, 1.5, 2.5}, []float64{0, 0, 1, 0, 1, 1, 0, 1}, 2)
}

// largeLogistic has n observations at evenly spaced t in [-2, 2] with
// outcomes from a fixed pattern: a narrower, nearly Gaussian posterior.
func largeLogistic(n int) *fnDensity {
	t, y := make([]float64, n), make([]float64, n)
	for i := range t {
		t[i] = -2 + 4*float64(i)/float64(n-1)
		if math.Sin(7*float64(i))+0.8*t[i] > 0 {
			y[i] = 1
		}
	}
	return logisticLike(t, y, 2)
}

// studentT is the unnormalised Student-t log-density
// -(nu+1)/2 log(1 + x²/nu): heavy-tailed, and not log-concave beyond
// |x| = sqrt(nu). Its integral is sqrt(nu) B(1/2, nu/2).
func studentT(nu float64) *fnDensity {
	return oneD(func(x float64) (float64, float64, float64) {
		u := 1 + x*x/nu
		return -(nu + 1) / 2 * math.Log(u), -(nu + 1) * x / (nu * u), -(nu + 1) / nu * (1 - x*x/nu) / (u * u)
	})
}
