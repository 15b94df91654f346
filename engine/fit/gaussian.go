package fit

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"bellcheck/engine/gauss"
)

// Gaussian is the multivariate normal the fits return (gauss.Gaussian).
type Gaussian = gauss.Gaussian

// check validates the Gaussian g and writes the lower Cholesky factor of Cov
// into l (len d*d).
func check(g Gaussian, l []float64) error {
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
		return fmt.Errorf("%w: the Gaussian's mean has an entry that is not finite", ErrNonFinite)
	}
	a := make([]float64, d*d)
	sliceFromSym(a, g.Cov)
	if !allFinite(a) {
		return fmt.Errorf("%w: the Gaussian's covariance has an entry that is not finite", ErrNonFinite)
	}
	if !cholesky(l, a, d) {
		return fmt.Errorf("%w: the Gaussian's %d×%d covariance", ErrNotPositiveDefinite, d, d)
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
	if err := check(g, make([]float64, len(mean)*len(mean))); err != nil {
		return Gaussian{}, fmt.Errorf("moment match: %w", err)
	}
	return g, nil
}

// Entropy returns the differential entropy (1/2) log det(2 pi e Cov).
func Entropy(g Gaussian) (float64, error) {
	d := g.Dim()
	l := make([]float64, d*d)
	if err := check(g, l); err != nil {
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
	if err := check(q, lq); err != nil {
		return 0, fmt.Errorf("KL, first Gaussian: %w", err)
	}
	if err := check(p, lp); err != nil {
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
