package gauss

import (
	"math"

	"gonum.org/v1/gonum/mat"
)

// Gaussian is a multivariate normal N(Mean, Cov), as a fit builds it. It is
// a plain value: Prepare checks and factorises it.
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
