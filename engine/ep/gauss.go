package ep

import (
	"math"

	"bellcheck/engine/internal/dense"
)

// Dense linear algebra of the small symmetric matrices EP works with (at
// most 4 by 4, row-major). gonum's mat would allocate on every call.

// cholesky writes the lower Cholesky factor of the d by d symmetric a into
// l and reports whether a is positive definite (dense.Cholesky).
func cholesky(l, a []float64, d int) bool { return dense.Cholesky(l, a, d, 0) }

// cholInverse writes a^-1 into inv given the Cholesky factor l of a; work
// holds d*d scratch values. It returns log det a.
func cholInverse(inv, l, work []float64, d int) float64 {
	// work = l^-1 (lower triangular), then inv = l^-T l^-1.
	logdet := 0.0
	for j := 0; j < d; j++ {
		logdet += 2 * math.Log(l[j*d+j])
		for i := 0; i < d; i++ {
			work[i*d+j] = 0
		}
		work[j*d+j] = 1 / l[j*d+j]
		for i := j + 1; i < d; i++ {
			s := 0.0
			for k := j; k < i; k++ {
				s -= l[i*d+k] * work[k*d+j]
			}
			work[i*d+j] = s / l[i*d+i]
		}
	}
	for i := 0; i < d; i++ {
		for j := 0; j <= i; j++ {
			s := 0.0
			for k := i; k < d; k++ {
				s += work[k*d+i] * work[k*d+j]
			}
			inv[i*d+j] = s
			inv[j*d+i] = s
		}
	}
	return logdet
}

// mulVec writes a x into y for the d by d matrix a.
func mulVec(y, a, x []float64, d int) {
	for i := 0; i < d; i++ {
		s := 0.0
		for k := 0; k < d; k++ {
			s += a[i*d+k] * x[k]
		}
		y[i] = s
	}
}

func dot(x, y []float64) float64 {
	s := 0.0
	for i := range x {
		s += x[i] * y[i]
	}
	return s
}

// gaussian holds a Gaussian in both parameterisations: natural (precision
// and linear term: exp(-x^T prec x / 2 + lin^T x)) and moments, with the
// Cholesky factor of the covariance and the log-normaliser
// phi = lin^T cov lin / 2 + log det cov / 2 + d log(2 pi) / 2, the log of
// the integral of exp(-x^T prec x / 2 + lin^T x).
type gaussian struct {
	d               int
	prec, lin       []float64
	mean, cov, lcov []float64
	phi             float64
	lprec, work     []float64
}

func newGaussian(d int) *gaussian {
	return &gaussian{d: d, prec: make([]float64, d*d), lin: make([]float64, d),
		mean: make([]float64, d), cov: make([]float64, d*d), lcov: make([]float64, d*d),
		lprec: make([]float64, d*d), work: make([]float64, d*d)}
}

// copyFrom makes g a copy of h (same dimension).
func (g *gaussian) copyFrom(h *gaussian) {
	copy(g.prec, h.prec)
	copy(g.lin, h.lin)
	copy(g.mean, h.mean)
	copy(g.cov, h.cov)
	copy(g.lcov, h.lcov)
	g.phi = h.phi
}

// moments computes the moments from the natural parameters and reports
// whether the precision is positive definite (a proper Gaussian).
func (g *gaussian) moments() bool {
	d := g.d
	if !cholesky(g.lprec, g.prec, d) {
		return false
	}
	logdetP := cholInverse(g.cov, g.lprec, g.work, d)
	mulVec(g.mean, g.cov, g.lin, d)
	if !cholesky(g.lcov, g.cov, d) {
		return false
	}
	g.phi = 0.5*dot(g.lin, g.mean) - 0.5*logdetP + 0.5*float64(d)*math.Log(2*math.Pi)
	for _, v := range g.mean {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return false
		}
	}
	return !math.IsNaN(g.phi) && !math.IsInf(g.phi, 0)
}

// nearReach is the Mahalanobis distance from the Gaussian part's mean
// beyond which a start point counts as far out (six standard deviations:
// the part's density there is below e^-18 of its peak).
const nearReach = 6

// near reports whether x lies within nearReach of g's mean in g's own
// metric; g's moments must be current.
func (g *gaussian) near(x []float64) bool {
	d := g.d
	m2 := 0.0
	for j := 0; j < d; j++ {
		for k := 0; k < d; k++ {
			m2 += (x[j] - g.mean[j]) * g.prec[j*d+k] * (x[k] - g.mean[k])
		}
	}
	return m2 <= nearReach*nearReach
}
