package grid

// The quadrature rule along each axis is the trapezoid rule with Gregory's
// end corrections of order h^4: weights h * (3/8, 7/6, 23/24, 1, ..., 1,
// 23/24, 7/6, 3/8) (Press, Teukolsky, Vetterling and Flannery, Numerical
// Recipes, 3rd ed., eq. 4.1.14, "extended formula of order 1/N^4"). Away
// from the ends it is the trapezoid rule, which converges faster than any
// power of h for a smooth density that decays inside the box (the usual
// case: Euler-Maclaurin), while the corrections keep fourth order where the
// density is cut off by a bound of its support. The half-resolution rule
// uses the same formula on every other node (spacing 2h); the difference of
// the two is the error estimate.

// MinPoints is the fewest points per axis: the half-resolution rule needs
// six points for its end corrections.
const MinPoints = 11

// gregoryWeights returns the weights of n equally spaced points with spacing
// h (n >= 6).
func gregoryWeights(n int, h float64) []float64 {
	w := make([]float64, n)
	for i := range w {
		w[i] = h
	}
	ends := [3]float64{3.0 / 8, 7.0 / 6, 23.0 / 24}
	for i, e := range ends {
		w[i] = h * e
		w[n-1-i] = h * e
	}
	return w
}

// halfWeights returns weights for the half-resolution rule: the rule of
// spacing 2h on the even nodes of an odd n, zero on the odd nodes.
func halfWeights(n int, h float64) []float64 {
	m := (n + 1) / 2
	g := gregoryWeights(m, 2*h)
	w := make([]float64, n)
	for i := 0; i < m; i++ {
		w[2*i] = g[i]
	}
	return w
}

// DefaultPoints returns the default number of points per axis for a
// density of d parameters: accuracy against time on a laptop-class core.
func DefaultPoints(d int) int {
	switch d {
	case 1:
		return 2001
	case 2:
		return 301
	case 3:
		return 81
	default:
		return 41
	}
}

// oddPoints returns n raised to at least MinPoints and made odd.
func oddPoints(n int) int {
	if n < MinPoints {
		n = MinPoints
	}
	if n%2 == 0 {
		n++
	}
	return n
}
