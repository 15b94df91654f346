package plot

import "math"

// Ellipse returns n points on the ellipse of the 2-D Gaussian with mean
// (mx, my) and covariance [[sxx, sxy], [sxy, syy]] at Mahalanobis radius r:
// the points m + r L (cos t, sin t), where L L' is the Cholesky factorisation
// of the covariance. It returns nil when the covariance is not positive
// definite.
func Ellipse(mx, my, sxx, sxy, syy, r float64, n int) [][2]float64 {
	if n < 3 || !(sxx > 0) || !(syy > 0) {
		return nil
	}
	l11 := math.Sqrt(sxx)
	l21 := sxy / l11
	d := syy - l21*l21
	if !(d > 0) {
		return nil
	}
	l22 := math.Sqrt(d)
	pts := make([][2]float64, n)
	for k := range pts {
		t := 2 * math.Pi * float64(k) / float64(n)
		u, v := r*math.Cos(t), r*math.Sin(t)
		pts[k] = [2]float64{mx + l11*u, my + l21*u + l22*v}
	}
	return pts
}

// MassRadius returns the Mahalanobis radius of the 2-D Gaussian ellipse that
// encloses probability p: the squared radius of a 2-D Gaussian is chi-square
// with 2 degrees of freedom, so P(R <= r) = 1 - exp(-r^2/2).
func MassRadius(p float64) float64 {
	if !(p > 0) || !(p < 1) {
		return math.NaN()
	}
	return math.Sqrt(-2 * math.Log1p(-p))
}
