package hermite

import (
	"math"
	"sync"
)

// MaxNodes is the largest rule Rule computes.
const MaxNodes = 1000

var cache sync.Map // int -> *cached

type cached struct {
	once sync.Once
	x, w []float64
}

// Rule returns the n-point Gauss-Hermite rule: nodes in increasing order and
// their weights, so that sum w_i f(x_i) approximates the integral of
// f(x) e^(-x^2), exactly for polynomials of degree below 2n. The slices are
// shared between callers and must not be modified. It returns nil slices for
// n < 1 or n > MaxNodes.
func Rule(n int) (x, w []float64) {
	if n < 1 || n > MaxNodes {
		return nil, nil
	}
	v, _ := cache.LoadOrStore(n, &cached{})
	c := v.(*cached)
	c.once.Do(func() { c.x, c.w = compute(n) })
	return c.x, c.w
}

// compute finds the rule. The nodes are the zeros of the Hermite polynomial
// H_n, found by scanning the orthonormal Hermite polynomials p_n (three-term
// recurrence, no overflow) for sign changes on a fine grid over
// [-sqrt(2n+1)-1, sqrt(2n+1)+1], which holds every zero, and polishing each
// by Newton's method (p_n' = sqrt(2n) p_(n-1)) kept inside its bracket; the
// weights are 2 / p_n'(x)^2.
func compute(n int) (x, w []float64) {
	if n < 1 {
		return nil, nil
	}
	// The recurrence's coefficients, sqrt(2/j) and sqrt((j-1)/j), taken
	// once: the square roots were most of the scan's time.
	ca, cb := make([]float64, n+1), make([]float64, n+1)
	for j := 1; j <= n; j++ {
		ca[j] = math.Sqrt(2 / float64(j))
		cb[j] = math.Sqrt(float64(j-1) / float64(j))
	}
	p0 := math.Pow(math.Pi, -0.25)
	// p returns p_n(t) and p_(n-1)(t) for the orthonormal polynomials.
	p := func(t float64) (pn, pn1 float64) {
		prev, cur := 0.0, p0
		for j := 1; j <= n; j++ {
			prev, cur = cur, ca[j]*t*cur-cb[j]*prev
		}
		return cur, prev
	}
	edge := math.Sqrt(2*float64(n)+1) + 1
	// Neighbouring zeros are at least about pi / sqrt(2n+1) apart (they
	// are closest near the middle): 8 cells in that gap keep them apart.
	cells := int(2*edge/(math.Pi/math.Sqrt(2*float64(n)+1))*8) + 1
	h := 2 * edge / float64(cells)
	x = make([]float64, 0, n)
	w = make([]float64, 0, n)
	a := -edge
	fa, _ := p(a)
	for i := 1; i <= cells && len(x) < n; i++ {
		b := -edge + float64(i)*h
		fb, _ := p(b)
		if fb == 0 || (fa < 0) != (fb < 0) {
			lo, hi := a, b
			t := (lo + hi) / 2
			if fb == 0 {
				t = b
			}
			for range 100 {
				f, f1 := p(t)
				if f == 0 {
					break
				}
				if (f < 0) == (fa < 0) {
					lo = t
				} else {
					hi = t
				}
				d := math.Sqrt(2*float64(n)) * f1
				next := t - f/d
				if !(next > lo && next < hi) {
					next = (lo + hi) / 2 // Newton left the bracket: bisect
				}
				if math.Abs(next-t) <= 1e-15*max(1, math.Abs(t)) {
					t = next
					break
				}
				t = next
			}
			_, f1 := p(t)
			d := math.Sqrt(2*float64(n)) * f1
			x = append(x, t)
			w = append(w, 2/(d*d))
			if fb == 0 {
				// b was the zero: start the next cell just past it.
				b += h / 2
				fb, _ = p(b)
				i++
			}
		}
		a, fa = b, fb
	}
	return x, w
}
