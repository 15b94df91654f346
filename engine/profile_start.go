package engine

import (
	"math"

	"bellcheck/engine/internal/dense"
	"bellcheck/engine/quadrature"
	"bellcheck/engine/transform"
)

// profileStart returns a start for the nested rule where the density has
// no mode on the unconstrained scale because one parameter's mode lies on
// a bound of its support (coordinate b of the unconstrained scale runs to
// -inf or +inf there): a hierarchical scale tau whose prior stays positive
// at 0, under which the group effects collapse onto their mean and the
// joint density grows without bound as tau -> 0 (the funnel's neck),
// while the marginal of log tau falls there and the posterior is proper.
// The scouting grid does not see the mass then (its box chases the neck
// or the tail of tau: with two groups and a half-Cauchy prior, 94 % of its
// mass sat in one layer at tau = 2e6).
//
// The start is the maximum over z_b of the Laplace approximation of z_b's
// marginal, L(z_b) = max over the others of log p - 1/2 log det(-H) of
// the others (the approach of Rue, Martino and Chopin 2009 to the
// hyperparameters' marginal), found on a scan of z_b from profileScanFrom
// in steps of profileScanStep with Newton steps for the others (each from
// the last), and refined by a parabola; its covariance is
// block-diagonal, minus the inverse of L's second derivative for z_b and
// the others' inverse negative Hessian
// there. The rule's pilot then centres and whitens the main rule from its
// own moments. from gives the other coordinates' first guess; ok is false
// where the profile has no interior maximum on the scan.
func (a *analysis) profileStart(p *transform.Density, b int, from []float64) (quadrature.Start, bool) {
	d := a.d
	pr := newProfiler(p, b)
	copy(pr.x, from)
	best, bestAt := math.Inf(-1), -1
	var values []float64
	var points [][]float64
	for i := 0; i < profileScanPoints; i++ {
		l, ok := pr.at(profileScanFrom + float64(i)*profileScanStep)
		if !ok {
			if bestAt >= 0 {
				break
			}
			copy(pr.x, from) // not yet in the support's reach: again from the mode
			values, points = values[:0], points[:0]
			continue
		}
		values = append(values, l)
		points = append(points, append([]float64(nil), pr.x...))
		if l > best {
			best, bestAt = l, len(values)-1
		}
		if l < best-profileDrop {
			break
		}
	}
	if bestAt <= 0 || bestAt >= len(values)-1 {
		return quadrature.Start{}, false // no interior maximum on the scan
	}
	// The parabola through the best point and its neighbours.
	l0, l1, l2 := values[bestAt-1], values[bestAt], values[bestAt+1]
	curv := (l0 - 2*l1 + l2) / (profileScanStep * profileScanStep)
	if !(curv < 0) {
		return quadrature.Start{}, false
	}
	shift := profileScanStep * (l0 - l2) / (2 * (l0 - 2*l1 + l2))
	zb := points[bestAt][b] + shift
	copy(pr.x, points[bestAt])
	if _, ok := pr.at(zb); !ok {
		return quadrature.Start{}, false
	}
	mode := append([]float64(nil), pr.x...)
	cov := make([]float64, d*d)
	cov[b*d+b] = -1 / curv
	m := d - 1
	inv := make([]float64, m*m)
	dense.CholInverse(pr.c, inv, pr.col, m)
	for i, ki := range pr.free {
		for j, kj := range pr.free {
			cov[ki*d+kj] = inv[i*m+j]
		}
	}
	return quadrature.Start{Mode: mode, Cov: cov, NoMode: true}, true
}

// The profile scan on the unconstrained scale (z_b from -15 to 15: tau from
// 3e-7 to 3e6 on a log scale), the fall of L below its best at which it
// stops, and the Newton steps of each point.
const (
	profileScanFrom   = -15.0
	profileScanStep   = 0.5
	profileScanPoints = 61
	profileDrop       = 30
	profileNewton     = 30
	// profilePivot is the least pivot of the free block's Cholesky factor
	// relative to its diagonal: far down a funnel's neck the block's
	// curvature is 1/tau^2 along the effects and the prior's along their
	// mean, and below this the factor's log-determinant is rounding.
	profilePivot = 1e-10
)

// profiler maximises p over every coordinate but b at a fixed z_b.
type profiler struct {
	p       *transform.Density
	b       int
	free    []int
	x, g, h []float64
	sub, c  []float64 // the free block of -H and its Cholesky factor
	step    []float64
	col     []float64
	trial   []float64
}

func newProfiler(p *transform.Density, b int) *profiler {
	d := p.Dim()
	pr := &profiler{p: p, b: b, x: make([]float64, d), g: make([]float64, d), h: make([]float64, d*d),
		sub: make([]float64, d*d), c: make([]float64, d*d), step: make([]float64, d), col: make([]float64, d), trial: make([]float64, d)}
	for k := 0; k < d; k++ {
		if k != b {
			pr.free = append(pr.free, k)
		}
	}
	return pr
}

// at sets x[b] = zb, maximises log p over the other coordinates from x by
// damped Newton steps and returns log p - 1/2 log det(-H) of the free block
// there; ok is false where log p is undefined or the free block's
// curvature is not positive definite at the end.
func (pr *profiler) at(zb float64) (float64, bool) {
	d := pr.p.Dim()
	m := len(pr.free)
	pr.x[pr.b] = zb
	for it := 0; ; it++ {
		f := pr.p.LogDensityDerivs(pr.x, pr.g, pr.h)
		if math.IsNaN(f) || math.IsInf(f, 0) {
			return 0, false
		}
		for i, ki := range pr.free {
			for j, kj := range pr.free {
				pr.sub[i*m+j] = -pr.h[ki*d+kj]
			}
		}
		if !dense.Cholesky(pr.c, pr.sub, m, profilePivot) {
			return 0, false
		}
		for i, ki := range pr.free {
			pr.step[i] = pr.g[ki]
		}
		dense.CholSolve(pr.c, pr.step, m)
		dec := 0.0
		for i, ki := range pr.free {
			dec += pr.step[i] * pr.g[ki]
		}
		if !(dec > 1e-10) || it == profileNewton {
			return f - dense.CholLogDet(pr.c, m)/2, true
		}
		accepted := false
		for alpha := 1.0; alpha > 1e-3; alpha /= 2 {
			copy(pr.trial, pr.x)
			for i, ki := range pr.free {
				pr.trial[ki] += alpha * pr.step[i]
			}
			if f2 := pr.p.LogDensity(pr.trial); f2 >= f-1e-12*math.Abs(f) {
				copy(pr.x, pr.trial)
				accepted = true
				break
			}
		}
		if !accepted {
			return f - dense.CholLogDet(pr.c, m)/2, true
		}
	}
}
