package grid

import "math"

// cubicPieces returns, for each interval [z_j, z_j+1] of a density sampled
// at n equally spaced nodes, the integral over the interval of the cubic
// through the four nearest nodes (Lagrange interpolation; the two end
// intervals use the four end nodes). Negative pieces are set to zero.
func cubicPieces(h float64, f []float64) []float64 {
	n := len(f)
	out := make([]float64, n-1)
	for j := 0; j < n-1; j++ {
		var v float64
		if j >= 1 && j <= n-3 {
			// The cubic through j-1..j+2 integrated over [j, j+1].
			v = h * (13*(f[j]+f[j+1]) - f[j-1] - f[j+2]) / 24
		} else {
			b := min(max(j-1, 0), n-4)
			c := cubicCoeffs(f[b : b+4])
			s0 := float64(j - b)
			v = h * (antideriv(c, s0+1) - antideriv(c, s0))
		}
		if v < 0 {
			v = 0
		}
		out[j] = v
	}
	return out
}

// cubicCoeffs returns a0..a3 of the cubic a0 + a1 s + a2 s^2 + a3 s^3
// through (0, f0), (1, f1), (2, f2), (3, f3).
func cubicCoeffs(f []float64) [4]float64 {
	// Newton's divided differences on unit spacing.
	d1 := [3]float64{f[1] - f[0], f[2] - f[1], f[3] - f[2]}
	d2 := [2]float64{(d1[1] - d1[0]) / 2, (d1[2] - d1[1]) / 2}
	d3 := (d2[1] - d2[0]) / 3
	// f0 + d1 s + d2 s(s-1) + d3 s(s-1)(s-2)
	return [4]float64{
		f[0],
		d1[0] - d2[0] + 2*d3,
		d2[0] - 3*d3,
		d3,
	}
}

func antideriv(c [4]float64, s float64) float64 {
	return s * (c[0] + s*(c[1]/2+s*(c[2]/3+s*c[3]/4)))
}

// quantile returns the prob-quantile of the density f sampled at lo + j*h,
// from its cumulative by piecewise-cubic interpolation.
func quantile(lo, h float64, f []float64, prob float64) float64 {
	return quantileFromPieces(lo, h, f, cubicPieces(h, f), prob)
}

// quantileFromPieces is quantile with the pieces from cubicPieces.
func quantileFromPieces(lo, h float64, f, pieces []float64, prob float64) float64 {
	n := len(f)
	total := 0.0
	for _, v := range pieces {
		total += v
	}
	if !(total > 0) {
		return math.NaN()
	}
	target := prob * total
	acc := 0.0
	for j, v := range pieces {
		if acc+v < target && j < len(pieces)-1 {
			acc += v
			continue
		}
		// Solve within [z_j, z_j+1] by bisection on the cubic's integral.
		b := min(max(j-1, 0), n-4)
		c := cubicCoeffs(f[b : b+4])
		s0 := float64(j - b)
		base := antideriv(c, s0)
		want := (target - acc) / h
		a, e := 0.0, 1.0
		for it := 0; it < 60; it++ {
			t := (a + e) / 2
			if antideriv(c, s0+t)-base < want {
				a = t
			} else {
				e = t
			}
		}
		return lo + (float64(j)+(a+e)/2)*h
	}
	return lo + float64(n-1)*h
}
