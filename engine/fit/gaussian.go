package fit

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"bellcheck/engine/special"
)

// Gaussian is a multivariate normal.
type Gaussian struct {
	Mean []float64
	Cov  *mat.SymDense
}

// Dim returns the number of dimensions.
func (g Gaussian) Dim() int { return len(g.Mean) }

// SD returns the marginal standard deviations sqrt(Cov_ii).
func (g Gaussian) SD() []float64 {
	sd := make([]float64, g.Dim())
	for i := range sd {
		sd[i] = math.Sqrt(g.Cov.At(i, i))
	}
	return sd
}

// Corr returns the correlation matrix Cov_ij / (sd_i sd_j).
func (g Gaussian) Corr() *mat.SymDense {
	d := g.Dim()
	sd := g.SD()
	c := mat.NewSymDense(d, nil)
	for i := 0; i < d; i++ {
		for j := i; j < d; j++ {
			if i == j {
				c.SetSym(i, i, 1)
				continue
			}
			c.SetSym(i, j, g.Cov.At(i, j)/(sd[i]*sd[j]))
		}
	}
	return c
}

// Interval returns the central interval of marginal i holding the given
// mass (e.g. 0.95): mean ± z sd with z the standard normal quantile of
// (1+mass)/2.
func (g Gaussian) Interval(i int, mass float64) [2]float64 {
	z := math.Sqrt2 * math.Erfinv(mass) // the standard normal's (1+mass)/2 quantile
	m, s := g.Mean[i], math.Sqrt(g.Cov.At(i, i))
	return [2]float64{m - z*s, m + z*s}
}

// Rows returns a symmetric matrix as a slice of rows, the form of the
// engine's JSON result.
func Rows(s mat.Symmetric) [][]float64 {
	d := s.SymmetricDim()
	r := make([][]float64, d)
	for i := range r {
		r[i] = make([]float64, d)
		for j := range r[i] {
			r[i][j] = s.At(i, j)
		}
	}
	return r
}

// check validates the Gaussian and writes the lower Cholesky factor of Cov
// into l (len d*d).
func (g Gaussian) check(l []float64) error {
	d := g.Dim()
	if d == 0 {
		return fmt.Errorf("%w: Gaussian with no dimensions", ErrBadInput)
	}
	if g.Cov == nil {
		return fmt.Errorf("%w: Gaussian has no covariance", ErrBadInput)
	}
	if n := g.Cov.SymmetricDim(); n != d {
		return fmt.Errorf("%w: Gaussian mean has %d entries but the covariance is %d×%d", ErrBadInput, d, n, n)
	}
	if !allFinite(g.Mean) {
		return fmt.Errorf("%w: Gaussian mean %v", ErrNonFinite, g.Mean)
	}
	a := make([]float64, d*d)
	sliceFromSym(a, g.Cov)
	if !allFinite(a) {
		return fmt.Errorf("%w: Gaussian covariance %v", ErrNonFinite, a)
	}
	if !cholesky(l, a, d) {
		return fmt.Errorf("%w: Gaussian covariance %v", ErrNotPositiveDefinite, a)
	}
	return nil
}

// MomentMatch is the forward-KL optimum: the Gaussian with the given mean and
// covariance. It checks them (same size, finite, positive definite) and
// returns copies.
func MomentMatch(mean []float64, cov *mat.SymDense) (Gaussian, error) {
	g := Gaussian{Mean: append([]float64(nil), mean...)}
	if cov != nil {
		g.Cov = mat.NewSymDense(cov.SymmetricDim(), nil)
		g.Cov.CopySym(cov)
	}
	if err := g.check(make([]float64, len(mean)*len(mean))); err != nil {
		return Gaussian{}, fmt.Errorf("moment match: %w", err)
	}
	return g, nil
}

// Entropy returns the differential entropy (1/2) log det(2 pi e Cov).
func Entropy(g Gaussian) (float64, error) {
	d := g.Dim()
	l := make([]float64, d*d)
	if err := g.check(l); err != nil {
		return 0, fmt.Errorf("entropy: %w", err)
	}
	return entropyFromLogDet(d, cholLogDet(l, d)), nil
}

func entropyFromLogDet(d int, logDetCov float64) float64 {
	return 0.5*float64(d)*(1+math.Log(2*math.Pi)) + 0.5*logDetCov
}

// KLGaussian returns KL(q||p) between two Gaussians in closed form:
// (1/2)[tr(Σp⁻¹Σq) + (μp-μq)ᵀΣp⁻¹(μp-μq) - d + log det Σp - log det Σq].
func KLGaussian(q, p Gaussian) (float64, error) {
	d := q.Dim()
	if p.Dim() != d {
		return 0, fmt.Errorf("%w: KL between Gaussians of %d and %d dimensions", ErrBadInput, d, p.Dim())
	}
	lq, lp := make([]float64, d*d), make([]float64, d*d)
	if err := q.check(lq); err != nil {
		return 0, fmt.Errorf("KL, first Gaussian: %w", err)
	}
	if err := p.check(lp); err != nil {
		return 0, fmt.Errorf("KL, second Gaussian: %w", err)
	}
	col := make([]float64, d)
	// tr(Σp⁻¹Σq) = ||Lp⁻¹ Lq||_F².
	tr := 0.0
	for j := 0; j < d; j++ {
		for i := 0; i < d; i++ {
			col[i] = lq[i*d+j]
		}
		forwardSolve(lp, col, d)
		for _, v := range col {
			tr += v * v
		}
	}
	for i := range col {
		col[i] = p.Mean[i] - q.Mean[i]
	}
	forwardSolve(lp, col, d)
	maha := 0.0
	for _, v := range col {
		maha += v * v
	}
	return 0.5 * (tr + maha - float64(d) + cholLogDet(lp, d) - cholLogDet(lq, d)), nil
}

// Central95Radius2 returns the 0.95 quantile of the chi-square distribution
// with d degrees of freedom: a point lies in a d-dimensional Gaussian's
// central 95 % region when its squared Mahalanobis distance is at most this.
func Central95Radius2(d int) float64 {
	return special.ChiSquareQuantile(d, 0.95)
}

// Evaluator evaluates one Gaussian's log-density and Mahalanobis distance at
// many points without allocating. It keeps scratch space, so it is not safe
// for concurrent use.
type Evaluator struct {
	d       int
	mean    []float64
	l       []float64 // lower Cholesky factor of Cov, row-major
	logNorm float64   // -(d/2) log 2pi - (1/2) log det Cov
	r95     float64
	z       []float64
}

// NewEvaluator checks g and prepares it for evaluation.
func NewEvaluator(g Gaussian) (*Evaluator, error) {
	d := g.Dim()
	e := &Evaluator{d: d, mean: append([]float64(nil), g.Mean...), l: make([]float64, d*d), z: make([]float64, d)}
	if err := g.check(e.l); err != nil {
		return nil, err
	}
	e.logNorm = -0.5*float64(d)*math.Log(2*math.Pi) - 0.5*cholLogDet(e.l, d)
	e.r95 = Central95Radius2(d)
	return e, nil
}

// Mahalanobis2 returns (x-μ)ᵀ Σ⁻¹ (x-μ).
func (e *Evaluator) Mahalanobis2(x []float64) float64 {
	for i := range e.z {
		e.z[i] = x[i] - e.mean[i]
	}
	forwardSolve(e.l, e.z, e.d)
	s := 0.0
	for _, v := range e.z {
		s += v * v
	}
	return s
}

// LogPDF returns the log-density at x.
func (e *Evaluator) LogPDF(x []float64) float64 {
	return e.logNorm - 0.5*e.Mahalanobis2(x)
}

// LogPDFBlock writes into out[i] the log-density at the point whose k-th
// coordinate is cols[k][i].
func (e *Evaluator) LogPDFBlock(cols [][]float64, out []float64) {
	d := e.d
	for i := range out {
		for k := 0; k < d; k++ {
			s := cols[k][i] - e.mean[k]
			for j := 0; j < k; j++ {
				s -= e.l[k*d+j] * e.z[j]
			}
			e.z[k] = s / e.l[k*d+k]
		}
		m := 0.0
		for _, v := range e.z {
			m += v * v
		}
		out[i] = e.logNorm - 0.5*m
	}
}

// InCentral95 reports whether x lies in the central 95 % region, the
// ellipsoid Mahalanobis2(x) <= Central95Radius2(d).
func (e *Evaluator) InCentral95(x []float64) bool {
	return e.Mahalanobis2(x) <= e.r95
}
