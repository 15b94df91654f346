package gauss

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// ErrBad means a Gaussian of the wrong shape, with a non-finite mean, or
// with a covariance that is not positive definite or whose correlation
// matrix cannot be inverted.
var ErrBad = errors.New("gauss: bad Gaussian")

// Prepared is a Gaussian factorised for evaluation: the Cholesky factor of
// its covariance, its precision (computed through the correlation matrix),
// its log normaliser. Its methods keep scratch space, so a Prepared is not
// safe for concurrent use; the Gaussian it holds must not be modified.
type Prepared struct {
	Gaussian
	sd      []float64
	chol    mat.Cholesky
	lower   []float64   // the Cholesky factor L (Cov = L L'), row-major
	invDiag []float64   // 1 / L_kk
	prec    [][]float64 // Cov^-1
	logDet  float64     // log det Cov
	logNorm float64     // -(d/2) log 2 pi - (1/2) log det Cov
	z       []float64
}

// Prepare checks g (a mean of its covariance's size, finite, and a
// covariance that is positive definite with an invertible correlation
// matrix) and factorises it. The precision is the inverse of the
// correlation matrix scaled by the standard deviations, so that
// parameters on scales far apart (sds 1e-8 and 1e8: a covariance of
// condition 1e32) do not make it look singular.
func Prepare(g Gaussian) (*Prepared, error) {
	d := g.Dim()
	if d == 0 || g.Cov == nil || g.Cov.SymmetricDim() != d {
		return nil, fmt.Errorf("%w: a mean of %d entries and a covariance of another size", ErrBad, d)
	}
	for _, v := range g.Mean {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, fmt.Errorf("%w: mean %v", ErrBad, g.Mean)
		}
	}
	p := &Prepared{Gaussian: g, sd: g.SD(), z: make([]float64, d)}
	if !p.chol.Factorize(g.Cov) {
		return nil, fmt.Errorf("%w: covariance not positive definite", ErrBad)
	}
	corr := mat.NewSymDense(d, nil)
	for i := 0; i < d; i++ {
		for j := i; j < d; j++ {
			corr.SetSym(i, j, g.Cov.At(i, j)/(p.sd[i]*p.sd[j]))
		}
	}
	var cc mat.Cholesky
	if !cc.Factorize(corr) {
		return nil, fmt.Errorf("%w: correlation matrix not positive definite", ErrBad)
	}
	var inv mat.SymDense
	if err := cc.InverseTo(&inv); err != nil {
		return nil, fmt.Errorf("%w: %v", ErrBad, err)
	}
	p.prec = make([][]float64, d)
	for i := range p.prec {
		p.prec[i] = make([]float64, d)
		for j := range p.prec[i] {
			p.prec[i][j] = inv.At(i, j) / (p.sd[i] * p.sd[j])
		}
	}
	var l mat.TriDense
	p.chol.LTo(&l)
	p.lower = make([]float64, d*d)
	for i := 0; i < d; i++ {
		for j := 0; j <= i; j++ {
			p.lower[i*d+j] = l.At(i, j)
		}
	}
	p.invDiag = make([]float64, d)
	for k := range p.invDiag {
		p.invDiag[k] = 1 / p.lower[k*d+k]
	}
	p.logDet = p.chol.LogDet()
	p.logNorm = -0.5*float64(d)*math.Log(2*math.Pi) - 0.5*p.logDet
	return p, nil
}

// StdDevs returns the marginal standard deviations (read only).
func (p *Prepared) StdDevs() []float64 { return p.sd }

// Precision returns Cov^-1 as rows (read only).
func (p *Prepared) Precision() [][]float64 { return p.prec }

// Lower returns the Cholesky factor L of Cov = L L', row-major (read only).
func (p *Prepared) Lower() []float64 { return p.lower }

// LogDet returns log det Cov.
func (p *Prepared) LogDet() float64 { return p.logDet }

// LogNorm returns the log normaliser -(d/2) log 2 pi - (1/2) log det Cov.
func (p *Prepared) LogNorm() float64 { return p.logNorm }

// Entropy returns the differential entropy (1/2) log det(2 pi e Cov).
func (p *Prepared) Entropy() float64 {
	return 0.5*float64(p.Dim())*(1+math.Log(2*math.Pi)) + 0.5*p.logDet
}

// Mahalanobis2 returns (x - mean)' Cov^-1 (x - mean).
//
// It solves L z = x - mean by forward substitution, multiplying by the
// diagonal's reciprocals (the comparison calls it for every Gaussian at
// every node of the rule: a twentieth of a 4-D analysis).
func (p *Prepared) Mahalanobis2(x []float64) float64 {
	d := len(p.invDiag)
	z := p.z[:d]
	mean := p.Mean[:d]
	x = x[:d]
	s := 0.0
	for k := range z {
		v := x[k] - mean[k]
		row := p.lower[k*d : k*d+k]
		for j, l := range row {
			v -= l * z[j]
		}
		v *= p.invDiag[k]
		z[k] = v
		s += v * v
	}
	return s
}

// Mahalanobis2Points writes into out[i] Mahalanobis2 of the point
// xs[i*d : (i+1)*d] (d = Dim()), with the same operations in the same
// order, so the same values: one call for a node set's points, whose loop
// over them the compiler keeps in registers for three and four
// coordinates (the comparison's sums over a 4-D rule's 1e5 nodes).
func (p *Prepared) Mahalanobis2Points(xs, out []float64) {
	d := len(p.invDiag)
	switch d {
	case 3:
		m0, m1, m2 := p.Mean[0], p.Mean[1], p.Mean[2]
		l10, l20, l21 := p.lower[3], p.lower[6], p.lower[7]
		i0, i1, i2 := p.invDiag[0], p.invDiag[1], p.invDiag[2]
		for i := range out {
			x := xs[i*3 : i*3+3 : i*3+3]
			z0 := (x[0] - m0) * i0
			s := z0 * z0
			z1 := ((x[1] - m1) - l10*z0) * i1
			s += z1 * z1
			z2 := ((x[2] - m2) - l20*z0 - l21*z1) * i2
			s += z2 * z2
			out[i] = s
		}
	case 4:
		m0, m1, m2, m3 := p.Mean[0], p.Mean[1], p.Mean[2], p.Mean[3]
		l10, l20, l21 := p.lower[4], p.lower[8], p.lower[9]
		l30, l31, l32 := p.lower[12], p.lower[13], p.lower[14]
		i0, i1, i2, i3 := p.invDiag[0], p.invDiag[1], p.invDiag[2], p.invDiag[3]
		for i := range out {
			x := xs[i*4 : i*4+4 : i*4+4]
			z0 := (x[0] - m0) * i0
			s := z0 * z0
			z1 := ((x[1] - m1) - l10*z0) * i1
			s += z1 * z1
			z2 := ((x[2] - m2) - l20*z0 - l21*z1) * i2
			s += z2 * z2
			z3 := ((x[3] - m3) - l30*z0 - l31*z1 - l32*z2) * i3
			s += z3 * z3
			out[i] = s
		}
	default:
		for i := range out {
			out[i] = p.Mahalanobis2(xs[i*d : (i+1)*d])
		}
	}
}

// LogPDF returns the log-density at x.
func (p *Prepared) LogPDF(x []float64) float64 {
	return p.logNorm - 0.5*p.Mahalanobis2(x)
}

// LogPDFBlock writes into out[i] the log-density at the point whose k-th
// coordinate is cols[k][i]. It does not allocate.
func (p *Prepared) LogPDFBlock(cols [][]float64, out []float64) {
	d := p.Dim()
	for i := range out {
		m := 0.0
		for k := 0; k < d; k++ {
			v := cols[k][i] - p.Mean[k]
			for j := 0; j < k; j++ {
				v -= p.lower[k*d+j] * p.z[j]
			}
			p.z[k] = v / p.lower[k*d+k]
			m += p.z[k] * p.z[k]
		}
		out[i] = p.logNorm - 0.5*m
	}
}

// MarginalPDF returns the density of marginal i at x.
func (p *Prepared) MarginalPDF(i int, x float64) float64 {
	s := p.sd[i]
	u := (x - p.Mean[i]) / s
	return math.Exp(-u*u/2) / (s * math.Sqrt(2*math.Pi))
}

// MassRadius returns the Mahalanobis radius of the ellipse holding the mass
// m of a 2-D Gaussian: the squared radius is chi-square with 2 degrees of
// freedom, P(R <= r) = 1 - e^(-r^2/2). It is NaN outside 0 < m < 1.
func MassRadius(m float64) float64 {
	if !(m > 0) || !(m < 1) {
		return math.NaN()
	}
	return math.Sqrt(-2 * math.Log1p(-m))
}

// Ellipse returns the contour of the (i, j) marginal that holds the given
// mass, as a closed polyline of n+1 points (the last repeats the first):
// mean + r L (cos t, sin t) with L the 2x2 marginal covariance's Cholesky
// factor and r = MassRadius(mass). It is nil for n < 3 or a mass outside
// (0, 1).
func (p *Prepared) Ellipse(i, j int, mass float64, n int) [][2]float64 {
	r := MassRadius(mass)
	if n < 3 || math.IsNaN(r) {
		return nil
	}
	sii, sij, sjj := p.Cov.At(i, i), p.Cov.At(i, j), p.Cov.At(j, j)
	l11 := math.Sqrt(sii)
	l21 := sij / l11
	l22 := math.Sqrt(max(sjj-l21*l21, 0))
	pts := make([][2]float64, 0, n+1)
	for t := 0; t <= n; t++ {
		th := 2 * math.Pi * float64(t%n) / float64(n)
		u, v := r*math.Cos(th), r*math.Sin(th)
		pts = append(pts, [2]float64{p.Mean[i] + l11*u, p.Mean[j] + l21*u + l22*v})
	}
	return pts
}
