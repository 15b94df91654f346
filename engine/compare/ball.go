package compare

import (
	"context"
	"fmt"
	"math"

	"gonum.org/v1/gonum/integrate/quad"

	"bellcheck/engine/gauss"
	"bellcheck/engine/special"
	"bellcheck/engine/target"
)

// The coverage where the exact reference's nodes do not resolve q (a
// mean-field fit narrow across a correlation, a 1-D rule of a few dozen
// nodes whose smoothed indicator has not settled): p's mass inside q's
// central 95 % region is an integral over a ball in q's whitened
// coordinates u (y = m + L u, |u| <= r0), where p is smooth on the scale
// of the ball whenever q is no wider than p. In spherical coordinates
// u = r w it is
//
//	|det L| / Z  integral_0^r0 r^(d-1) integral_(S^(d-1)) p(m + L r w) dw dr,
//
// taken by a product rule: Gauss-Legendre in r on [0, r0]; on the sphere,
// the trapezoid rule in the angle of a circle (spectral for a periodic
// integrand), Gauss-Legendre in the cosine of the polar angle on S^2, and
// on S^3 Gauss-Chebyshev of the second kind (weight sqrt(1 - s^2)) in the
// cosine of the first angle, the rest as S^2 (dw on S^(d-1) is
// (1 - s^2)^((d-3)/2) ds dw on S^(d-2)). Two rules, the second with about
// two thirds of the nodes along each coordinate, give the change that says
// whether the value has settled (ballCoverage): with half, the 4-D rule's
// change was 2.8e-4 on a normal q equal to p while both values were right
// to 1e-8.

// ballOrders are the nodes along each spherical coordinate (r, then the
// angles), finest rule first, by dimension (index d-1): 64, 1,152, 4,096
// and 8,000 points in 1-D to 4-D (the second rule 44, 512, 1,331, 2,058).
var ballOrders = [4][2][]int{
	{{32}, {22}},
	{{24, 48}, {16, 32}},
	{{16, 16, 16}, {11, 11, 11}},
	{{10, 8, 10, 10}, {7, 6, 7, 7}},
}

// ballCoverTol is the largest change of the coverage between the two
// rules for which the finer one's value is reported. Where p is smooth on
// the scale of q's region the finer rule is far better than the change (on
// the tests' normals right to 1e-8 where the change was 2.8e-4); where it
// is not, the error is of the change's size: the 2-D funnel's Laplace fit,
// narrow in x at v = -4.5 across a region where p's width in x runs from
// 0.003 to 4, changed by less than 1e-3 and was 6.5e-4 off the true
// 0.301935 (testdata/pathological/funnel.txt). At 1e-4 it is refused.
const ballCoverTol = 1e-4

// ballCoverage returns p's mass inside q's central 95 % region {M(y) <=
// r0^2} by the finer of the two product rules over the ball, and the
// change between the two. p is the density on the fitting scale and logZ
// the log of its integral. log p = -Inf counts as no mass; NaN or +Inf at
// a node is an error (the coverage is then not defined by these rules).
func ballCoverage(ctx context.Context, p target.Density, q *gauss.Prepared, logZ, r0 float64) (cover, change float64, err error) {
	d := q.Dim()
	if d < 1 || d > len(ballOrders) {
		return math.NaN(), math.NaN(), fmt.Errorf("compare: no ball rule in %d dimensions", d)
	}
	var v [2]float64
	for i, orders := range ballOrders[d-1] {
		if v[i], err = ballRule(ctx, p, q, logZ, r0, orders); err != nil {
			return math.NaN(), math.NaN(), err
		}
	}
	return v[0], math.Abs(v[0] - v[1]), nil
}

// ballRule is one product rule of ballCoverage with the given numbers of
// nodes along r and the sphere's coordinates.
func ballRule(ctx context.Context, p target.Density, q *gauss.Prepared, logZ, r0 float64, orders []int) (float64, error) {
	d := q.Dim()
	rs := make([]float64, orders[0])
	wr := make([]float64, orders[0])
	quad.Legendre{}.FixedLocations(rs, wr, 0, r0)
	dirs, wd := sphereRule(d, orders[1:])
	n := len(rs) * len(wd)
	cols := make([][]float64, d)
	for k := range cols {
		cols[k] = make([]float64, n)
	}
	wts := make([]float64, n)
	L, m := q.Lower(), q.Mean
	u := make([]float64, d)
	i := 0
	for a, r := range rs {
		radial := wr[a] * math.Pow(r, float64(d-1))
		for b, w := range wd {
			for k := 0; k < d; k++ {
				u[k] = r * dirs[b*d+k]
			}
			for k := 0; k < d; k++ {
				s := m[k]
				for l := 0; l <= k; l++ {
					s += L[k*d+l] * u[l]
				}
				cols[k][i] = s
			}
			wts[i] = radial * w
			i++
		}
	}
	out := make([]float64, n)
	const block = 512
	part := make([][]float64, d)
	for i0 := 0; i0 < n; i0 += block {
		i1 := min(i0+block, n)
		for k := range part {
			part[k] = cols[k][i0:i1]
		}
		p.LogDensityBlock(part, out[i0:i1])
		if ctx != nil {
			if err := ctx.Err(); err != nil {
				return 0, err
			}
		}
	}
	// |det L| = exp(log det Cov / 2).
	scale := q.LogDet()/2 - logZ
	sum := 0.0
	for i, lp := range out {
		switch {
		case math.IsInf(lp, -1):
			continue
		case math.IsNaN(lp) || math.IsInf(lp, 1):
			return 0, fmt.Errorf("compare: log p is %v inside q's region", lp)
		}
		sum += wts[i] * special.Exp(lp+scale)
	}
	return sum, nil
}

// sphereRule returns the directions (row-major, d per direction) and
// weights of a product rule on the unit sphere S^(d-1), with orders giving
// the nodes along its coordinates (see the comment above ballOrders); the
// weights sum to the sphere's area.
func sphereRule(d int, orders []int) (dirs, w []float64) {
	switch d {
	case 1:
		return []float64{-1, 1}, []float64{1, 1}
	case 2:
		n := orders[0]
		for j := 0; j < n; j++ {
			phi := 2 * math.Pi * float64(j) / float64(n)
			dirs = append(dirs, math.Cos(phi), math.Sin(phi))
			w = append(w, 2*math.Pi/float64(n))
		}
		return dirs, w
	case 3:
		ts := make([]float64, orders[0])
		wt := make([]float64, orders[0])
		quad.Legendre{}.FixedLocations(ts, wt, -1, 1)
		circle, wc := sphereRule(2, orders[1:])
		for a, t := range ts {
			s := math.Sqrt(1 - t*t)
			for b, c := range wc {
				dirs = append(dirs, t, s*circle[2*b], s*circle[2*b+1])
				w = append(w, wt[a]*c)
			}
		}
		return dirs, w
	}
	// S^3: Gauss-Chebyshev of the second kind in s = cos(psi).
	n := orders[0]
	inner, wi := sphereRule(3, orders[1:])
	for a := 1; a <= n; a++ {
		theta := float64(a) * math.Pi / float64(n+1)
		s, c := math.Cos(theta), math.Sin(theta)
		ws := math.Pi / float64(n+1) * c * c
		for b, v := range wi {
			dirs = append(dirs, s, c*inner[3*b], c*inner[3*b+1], c*inner[3*b+2])
			w = append(w, ws*v)
		}
	}
	return dirs, w
}
