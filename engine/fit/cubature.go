package fit

import (
	"fmt"
	"math"

	"bellcheck/engine/hermite"
)

// maxNodes caps the size of a tensor cubature rule.
const maxNodes = 1 << 20

// defaultOrder returns the default number of Gauss-Hermite nodes per axis
// for d dimensions: 20, 12, 8, 6 for one to four, 5 above.
func defaultOrder(d int) int {
	switch d {
	case 1:
		return 20
	case 2:
		return 12
	case 3:
		return 8
	case 4:
		return 6
	}
	return 5
}

// rule is a tensor-product Gauss-Hermite rule for the standard normal in d
// dimensions: E[f(Z)] ≈ sum_k w[k] f(z[k*d : k*d+d]). The one-dimensional
// rule is package hermite's (weight e^(-x^2)); substituting x = z/sqrt(2)
// rescales its nodes by sqrt(2) and its weights by 1/sqrt(pi) for the
// standard normal. The rule is exact for polynomials of degree up to 2n-1
// in each coordinate.
type rule struct {
	d, n int
	z    []float64
	w    []float64
}

func newRule(d, n int) (rule, error) {
	if n < 1 {
		return rule{}, fmt.Errorf("%w: cubature order %d", ErrBadInput, n)
	}
	size := 1
	for i := 0; i < d; i++ {
		size *= n
		if size > maxNodes {
			return rule{}, fmt.Errorf("%w: cubature with %d nodes per axis in %d dimensions has more than %d nodes", ErrBadInput, n, d, maxNodes)
		}
	}
	hx, hw := hermite.Rule(n)
	if hx == nil {
		return rule{}, fmt.Errorf("%w: cubature order %d exceeds %d", ErrBadInput, n, hermite.MaxNodes)
	}
	x1, w1 := make([]float64, n), make([]float64, n)
	for i := range hx {
		x1[i] = hx[i] * math.Sqrt2
		w1[i] = hw[i] / math.Sqrt(math.Pi)
	}
	r := rule{d: d, n: n, z: make([]float64, size*d), w: make([]float64, size)}
	idx := make([]int, d)
	for k := 0; k < size; k++ {
		w := 1.0
		for i := 0; i < d; i++ {
			r.z[k*d+i] = x1[idx[i]]
			w *= w1[idx[i]]
		}
		r.w[k] = w
		for i := 0; i < d; i++ {
			idx[i]++
			if idx[i] < n {
				break
			}
			idx[i] = 0
		}
	}
	return r, nil
}

// size returns the number of nodes.
func (r rule) size() int { return len(r.w) }
