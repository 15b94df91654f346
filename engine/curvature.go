package engine

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"bellcheck/engine/internal/dense"
)

// Curvature sets side by side the two curvatures the fits invert, both on
// the fitting scale: the negative Hessian of log p at the mode (the
// Laplace fit's precision) and its average -E_q[Hessian log p] under the
// reverse-KL Gaussian q at its optimum (that fit's precision).
type Curvature struct {
	// AtMode is -Hessian log p at the highest mode.
	AtMode [][]float64 `json:"at_mode"`
	// Averaged is -E_q[Hessian log p] at the reverse-KL optimum.
	Averaged [][]float64 `json:"averaged"`
	// RatioMin and RatioMax are the smallest and largest generalised
	// eigenvalues of (Averaged, AtMode): the extremes over directions u of
	// u'Averaged u / u'AtMode u. Below 1 the averaged curvature is smaller
	// along some direction (the density flattens away from the mode there),
	// above 1 larger (it steepens).
	RatioMin float64 `json:"ratio_min"`
	RatioMax float64 `json:"ratio_max"`
	// Summary is one plain sentence saying what the difference means for
	// this density.
	Summary string `json:"summary"`
}

// curvatureTolerance is the relative difference below which the two
// curvatures are said to agree (common practice: a 5 % change in
// curvature is a 2.5 % change in sd).
const curvatureTolerance = 0.05

// compareCurvatures fills res.Curvature where both the Laplace fit and a
// converged reverse-KL fit exist.
func (a *analysis) compareCurvatures(res *Result) {
	lap, rev := res.Fits[Laplace], res.Fits[ReverseKL]
	if lap == nil || rev == nil || !rev.Converged || lap.Precision == nil || rev.Precision == nil {
		return
	}
	lo, hi, ok := generalisedEigenRange(rev.Precision, lap.Precision)
	if !ok {
		return
	}
	res.Curvature = &Curvature{
		AtMode: copyRows(lap.Precision), Averaged: copyRows(rev.Precision),
		RatioMin: lo, RatioMax: hi, Summary: curvatureSentence(lo, hi, a.d),
	}
}

// generalisedEigenRange returns the smallest and largest eigenvalues λ of
// A u = λ B u for symmetric A and positive definite B: the eigenvalues of
// L⁻¹ A L⁻ᵀ where B = L Lᵀ.
func generalisedEigenRange(a, b [][]float64) (lo, hi float64, ok bool) {
	d := len(b)
	if d == 0 || len(a) != d {
		return 0, 0, false
	}
	bs, as := symFromRows(b), symFromRows(a)
	var ch mat.Cholesky
	if !ch.Factorize(bs) {
		return 0, 0, false
	}
	var l mat.TriDense
	ch.LTo(&l)
	// X = L⁻¹ A, then M = L⁻¹ Xᵀ = L⁻¹ A L⁻ᵀ.
	var x, m mat.Dense
	if err := x.Solve(&l, as); err != nil {
		return 0, 0, false
	}
	if err := m.Solve(&l, x.T()); err != nil {
		return 0, 0, false
	}
	ms := make([]float64, d*d)
	for i := 0; i < d; i++ {
		for j := i; j < d; j++ {
			ms[i*d+j] = 0.5 * (m.At(i, j) + m.At(j, i))
		}
	}
	vals := make([]float64, d)
	if !dense.EigenSym(vals, nil, ms, d) {
		return 0, 0, false
	}
	lo, hi = math.Inf(1), math.Inf(-1)
	for _, v := range vals {
		lo, hi = min(lo, v), max(hi, v)
	}
	return lo, hi, finite(lo) && finite(hi)
}

// curvatureSentence says what the ratios of the averaged curvature to the
// curvature at the mode mean. A Gaussian's sd along a direction scales as
// the inverse square root of its curvature there.
func curvatureSentence(lo, hi float64, d int) string {
	dir := "in every direction"
	if d == 1 {
		dir = ""
	}
	sp := func(s string) string {
		if s == "" {
			return ""
		}
		return " " + s
	}
	switch {
	case lo >= 1-curvatureTolerance && hi <= 1+curvatureTolerance:
		return fmt.Sprintf("The averaged curvature -E_q[Hessian] at the reverse-KL optimum agrees with the curvature at the mode within %.0f%%%s (ratios %.3g to %.3g): the density is close to Gaussian where the fits look, so the reverse-KL and Laplace Gaussians have nearly the same spread.",
			100*curvatureTolerance, sp(dir), lo, hi)
	case hi < 1:
		return fmt.Sprintf("The averaged curvature -E_q[Hessian] at the reverse-KL optimum is smaller than the curvature at the mode%s (by a factor %.3g to %.3g): the density flattens away from its mode, so the reverse-KL Gaussian is wider than the Laplace one (sd up to %.3g times).",
			sp(dir), lo, hi, 1/math.Sqrt(lo))
	case lo > 1:
		return fmt.Sprintf("The averaged curvature -E_q[Hessian] at the reverse-KL optimum is larger than the curvature at the mode%s (by a factor %.3g to %.3g): the density steepens away from its mode, so the reverse-KL Gaussian is narrower than the Laplace one (sd down to %.3g times).",
			sp(dir), lo, hi, 1/math.Sqrt(hi))
	case hi <= 1+curvatureTolerance:
		return fmt.Sprintf("The averaged curvature -E_q[Hessian] at the reverse-KL optimum is smaller than the curvature at the mode along some direction (by a factor down to %.3g) and about equal elsewhere: the density flattens away from its mode there, so the reverse-KL Gaussian is wider than the Laplace one along it (sd up to %.3g times).",
			lo, 1/math.Sqrt(lo))
	case lo >= 1-curvatureTolerance:
		return fmt.Sprintf("The averaged curvature -E_q[Hessian] at the reverse-KL optimum is larger than the curvature at the mode along some direction (by a factor up to %.3g) and about equal elsewhere: the density steepens away from its mode there, so the reverse-KL Gaussian is narrower than the Laplace one along it (sd down to %.3g times).",
			hi, 1/math.Sqrt(hi))
	default:
		return fmt.Sprintf("The averaged curvature -E_q[Hessian] at the reverse-KL optimum is smaller than the curvature at the mode along some directions (by a factor down to %.3g) and larger along others (up to %.3g): the density flattens away from its mode along the first and steepens along the second, so the reverse-KL Gaussian is wider than the Laplace one along the first and narrower along the second.",
			lo, hi)
	}
}
