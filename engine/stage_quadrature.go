package engine

import (
	"errors"
	"fmt"
	"math"

	"bellcheck/engine/fit"
	"bellcheck/engine/grid"
	"bellcheck/engine/quadrature"
	"bellcheck/engine/transform"
)

// useQuadrature switches the exact results (log Z, the moments, quantiles,
// skewness and kurtosis on both scales, the variance and improper
// verdicts) from the grid to the nested rule of engine/quadrature, which
// integrates on the unconstrained scale around the best mode. It is off
// while the wiring is incomplete: the mode search still starts from the
// grid's peaks, and the comparison and the plots still use the grid.
var useQuadrature = false

// quadratureLogZErrMax is the error estimate of log Z above which the
// nested rule's results are not used (the grid's stay).
const quadratureLogZErrMax = 1e-3

// exactByQuadrature replaces the reference's exact results by the nested
// rule's, where it applies and succeeds: every parameter has an
// unconstrained scale (the support is the whole line, [lo, inf] or [lo,
// hi]), the user set no box (the grid integrates over the box), and a mode
// was found. Where it does not, the grid's results stay as they are.
func (a *analysis) exactByQuadrature() error {
	if !useQuadrature || len(a.modes.fitModes) == 0 {
		return nil
	}
	d := a.d
	maps := make([]transform.Map, d)
	for k, prm := range a.m.Params {
		if a.pinned[k][0] || a.pinned[k][1] {
			return nil
		}
		mp := transform.Map{Kind: transform.Identity, Lo: prm.Lo, Hi: prm.Hi}
		switch {
		case !math.IsInf(prm.Lo, 0) && !math.IsInf(prm.Hi, 0):
			mp.Kind = transform.Logit
		case !math.IsInf(prm.Lo, 0):
			mp.Kind = transform.Log
		case !math.IsInf(prm.Hi, 0):
			return nil // no unconstrained scale for (-inf, hi]
		}
		maps[k] = mp
	}
	p, err := transform.Wrap(a.ev, maps)
	if err != nil {
		return nil
	}
	// The best mode, on the unconstrained scale, polished there for its
	// curvature.
	best := a.modes.fitModes[0].X
	z0 := make([]float64, d)
	for k := range z0 {
		z0[k] = maps[k].FromOriginal(a.maps[k].ToOriginal(best[k]))
		if math.IsNaN(z0[k]) || math.IsInf(z0[k], 0) {
			return nil
		}
	}
	ms, err := fit.FindModes(a.ctx, p, [][]float64{z0}, nil, nil)
	if err != nil {
		if ctxErr := a.ctx.Err(); ctxErr != nil {
			return ctxErr
		}
		return nil
	}
	if len(ms) == 0 || !ms[0].PositiveDefinite {
		return nil
	}
	nh := make([]float64, d*d)
	for i := 0; i < d; i++ {
		for j := 0; j < d; j++ {
			nh[i*d+j] = -ms[0].Hess.At(i, j)
		}
	}
	q, err := quadrature.Integrate(a.ctx, p, quadrature.Start{Mode: ms[0].X, NegHessian: nh},
		quadrature.Settings{Maps: maps, Progress: a.tr.at})
	if err != nil {
		if ctxErr := a.ctx.Err(); ctxErr != nil {
			return ctxErr
		}
		if errors.Is(err, quadrature.ErrTooLarge) || errors.Is(err, quadrature.ErrNoMass) {
			return nil
		}
		return fmt.Errorf("engine: the nested rule: %w", err)
	}
	if !q.Improper && !(q.LogZErr < quadratureLogZErrMax) {
		return nil
	}
	return a.ref.takeQuadrature(a, q, maps)
}

// takeQuadrature fills the reference's exact results from q.
func (r *reference) takeQuadrature(a *analysis, q *quadrature.Result, maps []transform.Map) error {
	d := a.d
	r.quad = q
	if r.unresolved {
		// The grid's verdict stands for the comparisons, which use it.
		r.gridUnresolved = true
		a.diag.drop(CodeUnresolved)
		a.diag.add(CodeUnresolved, SeverityWarning,
			"The grid cannot resolve the density (a peak or a tail it does not follow): the exact results come from the nested rule around the mode, and the fits' comparisons, which use the grid, are not reported.")
	}
	if r.singularImproper {
		a.diag.drop(CodeImproper)
	}
	r.unresolved = false
	r.singularImproper = false
	r.tailMass = 0
	r.logZ, r.logZErr = q.LogZ, q.LogZErr
	if q.Improper {
		r.logZ, r.logZErr = math.NaN(), math.NaN()
		r.varUnsettled = make([]bool, d)
		for k := range r.varUnsettled {
			r.varUnsettled[k] = true
		}
		r.noVariance = true
		return nil
	}
	// The original scale: the rule's own moments; the fitting scale: per
	// parameter the original (identity fitting scale) or the unconstrained
	// one (the same log or logit), the cross terms from the node set.
	fitting := q.MomentsOf(func(z, y []float64) {
		for k := range z {
			y[k] = a.maps[k].FromOriginal(maps[k].ToOriginal(z[k]))
		}
	})
	for k := 0; k < d; k++ {
		src := &q.Unconstrained
		if a.maps[k].Kind == transform.Identity {
			src = &q.Original
		}
		fitting.MeanInfinite[k] = src.MeanInfinite[k]
		fitting.VarInfinite[k] = src.VarInfinite[k]
		fitting.SkewnessInfinite[k] = src.SkewnessInfinite[k]
		fitting.KurtosisInfinite[k] = src.KurtosisInfinite[k]
	}
	quant := make([][3]float64, d)
	for k := 0; k < d; k++ {
		qs, _, err := q.Quantiles(a.ctx, k, []float64{0.025, 0.5, 0.975})
		if err != nil {
			if ctxErr := a.ctx.Err(); ctxErr != nil {
				return ctxErr
			}
			qs = []float64{math.NaN(), math.NaN(), math.NaN()}
		}
		copy(quant[k][:], qs)
	}
	r.original = gridMoments(q.Original, d, quant, nil)
	r.fitting = gridMoments(fitting, d, quant, a.maps)
	r.varUnsettled = make([]bool, d)
	r.noVariance = false
	for k := 0; k < d; k++ {
		if fitting.VarInfinite[k] {
			r.varUnsettled[k] = true
			r.noVariance = true
		}
	}
	return nil
}

// gridMoments returns m in the reference's form; the tail shares say
// "does not settle" (+Inf) where the rule found the moment infinite, 0
// elsewhere. Quantiles are on the original scale, mapped by maps when set.
func gridMoments(m quadrature.Moments, d int, quant [][3]float64, maps []transform.Map) grid.Moments {
	g := grid.Moments{
		Mean: m.Mean, MeanErr: m.MeanErr, Skewness: m.Skewness, ExcessKurtosis: m.ExcessKurtosis,
		Cov: make([][]float64, d), CovErr: make([][]float64, d), SD: make([]float64, d), Corr: make([][]float64, d),
		Quantiles: make([][3]float64, d), TailShare: make([]float64, d), AbsTailShare: make([]float64, d),
		KurtosisTailShare: make([]float64, d),
	}
	for k := 0; k < d; k++ {
		g.Cov[k], g.CovErr[k] = m.Cov[k*d:(k+1)*d], m.CovErr[k*d:(k+1)*d]
		g.SD[k] = math.Sqrt(m.Cov[k*d+k])
		for i, v := range quant[k] {
			if maps != nil {
				v = maps[k].FromOriginal(v)
			}
			g.Quantiles[k][i] = v
		}
		if m.VarInfinite[k] {
			g.TailShare[k] = math.Inf(1)
		}
		if m.MeanInfinite[k] {
			g.AbsTailShare[k] = math.Inf(1)
		}
		if m.KurtosisInfinite[k] {
			g.KurtosisTailShare[k] = math.Inf(1)
		}
	}
	for k := 0; k < d; k++ {
		g.Corr[k] = make([]float64, d)
		for l := 0; l < d; l++ {
			g.Corr[k][l] = m.Cov[k*d+l] / (g.SD[k] * g.SD[l])
		}
	}
	return g
}
