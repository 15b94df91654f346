package quadrature

import (
	"math"

	"bellcheck/engine/target"
)

// slice is p with some coordinates fixed: a density of the others.
type slice struct {
	p     target.Density
	fixed []int     // fixed coordinates
	val   []float64 // their values
	free  []int     // the free coordinates, in order
	x     []float64 // scratch: a full point
	g, h  []float64 // scratch: full derivatives
	cols  [][]float64
	buf   [][]float64
}

var _ target.Density = (*slice)(nil)

func newSlice(p target.Density, fixed []int) *slice {
	d := p.Dim()
	s := &slice{p: p, fixed: fixed, val: make([]float64, len(fixed)), x: make([]float64, d),
		g: make([]float64, d), h: make([]float64, d*d), cols: make([][]float64, d), buf: make([][]float64, d)}
	isFixed := make([]bool, d)
	for _, k := range fixed {
		isFixed[k] = true
	}
	for k := 0; k < d; k++ {
		if !isFixed[k] {
			s.free = append(s.free, k)
		}
	}
	return s
}

func (s *slice) Dim() int { return len(s.free) }

func (s *slice) fill(z []float64) {
	for i, k := range s.fixed {
		s.x[k] = s.val[i]
	}
	for i, k := range s.free {
		s.x[k] = z[i]
	}
}

func (s *slice) LogDensity(z []float64) float64 {
	s.fill(z)
	return s.p.LogDensity(s.x)
}

func (s *slice) LogDensityDerivs(z, grad, hess []float64) float64 {
	s.fill(z)
	f := s.p.LogDensityDerivs(s.x, s.g, s.h)
	d := s.p.Dim()
	m := len(s.free)
	for i, k := range s.free {
		grad[i] = s.g[k]
		for j, l := range s.free {
			hess[i*m+j] = s.h[k*d+l]
		}
	}
	return f
}

func (s *slice) LogDensityBlock(cols [][]float64, out []float64) {
	n := len(out)
	for i, k := range s.fixed {
		if cap(s.buf[k]) < n {
			s.buf[k] = make([]float64, n)
		}
		b := s.buf[k][:n]
		for j := range b {
			b[j] = s.val[i]
		}
		s.cols[k] = b
	}
	for i, k := range s.free {
		s.cols[k] = cols[i]
	}
	s.p.LogDensityBlock(s.cols, out)
}

func (s *slice) Clone() target.Density {
	c := newSlice(s.p.Clone(), s.fixed)
	copy(c.val, s.val)
	return c
}

// conditional returns the Gaussian conditional of the free coordinates
// given the fixed ones at val, from the mean and covariance (row-major,
// all coordinates): the mean and covariance of the free ones. It reports
// false when the covariance of the fixed ones is singular.
func conditional(mean, cov []float64, d int, fixed, free []int, val []float64) ([]float64, []float64, bool) {
	nf, nr := len(fixed), len(free)
	// One array for the scratch and the results (a pair plot conditions a
	// slice per point).
	buf := make([]float64, 2*nf*nf+2*nf+nr+nr*nf+nr*nr)
	take := func(k int) []float64 {
		out := buf[:k:k]
		buf = buf[k:]
		return out
	}
	sff := take(nf * nf)
	for i, a := range fixed {
		for j, b := range fixed {
			sff[i*nf+j] = cov[a*d+b]
		}
	}
	c := take(nf * nf)
	if !cholesky(c, sff, nf) {
		return nil, nil, false
	}
	dv := take(nf)
	for i, a := range fixed {
		dv[i] = val[i] - mean[a]
	}
	cholSolve(c, dv, nf)
	m := take(nr)
	k := take(nr * nf) // S_rf S_ff^-1, row by row
	col := take(nf)
	for i, a := range free {
		m[i] = mean[a]
		for j, b := range fixed {
			m[i] += cov[a*d+b] * dv[j]
			col[j] = cov[a*d+b]
		}
		cholSolve(c, col, nf)
		copy(k[i*nf:(i+1)*nf], col)
	}
	s := take(nr * nr)
	for i, a := range free {
		for j, b := range free {
			v := cov[a*d+b]
			for l, f := range fixed {
				v -= k[i*nf+l] * cov[f*d+b]
			}
			s[i*nr+j] = v
		}
	}
	for i := range m {
		if math.IsNaN(m[i]) {
			return nil, nil, false
		}
	}
	return m, s, true
}
