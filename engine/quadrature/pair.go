package quadrature

import (
	"context"
	"errors"
	"fmt"
	"math"

	"bellcheck/engine/special"
	"bellcheck/engine/target"
	"bellcheck/engine/transform"
)

// PairNodes integrates the pair marginal of parameters i and j (three or
// four parameters) by a 2-D nested rule of its own, each of its values a
// slice's rule over the other parameters, and returns at the rule's nodes
// the pair-marginal density on the original scale and the node's share of
// the mass. The sums of the shares over a superlevel set of the density
// give the mass it holds, where the nodes follow the density as the main
// rule's do: a funnel's neck, narrower than any plot image's cells, is
// rescaled at each node of the outer axis. It costs a slice a value (798
// nodes and 3,775 values on the 3-D funnel's (v, x) pair): the plots call
// it only for a pair whose image does not resolve the density.
func (res *Result) PairNodes(ctx context.Context, i, j int) (dens, mass []float64, err error) {
	d := res.Dim
	if res.Improper {
		return nil, nil, ErrImproper
	}
	if d < 3 || i < 0 || j < 0 || i >= d || j >= d || i == j {
		return nil, nil, fmt.Errorf("quadrature: a pair rule for parameters %d and %d of %d", i+1, j+1, d)
	}
	if i > j {
		i, j = j, i
	}
	if res.cov == nil {
		return nil, nil, ErrBadStart
	}
	pt := newPairTarget(ctx, res, i, j)
	start := Start{
		Mode: []float64{res.centre[i], res.centre[j]},
		Cov:  []float64{res.cov[i*d+i], res.cov[i*d+j], res.cov[j*d+i], res.cov[j*d+j]},
	}
	s := res.settings.withDefaults()
	s.Order = sliceOrder(res.Order, []int{i, j})
	s.Maps = nil
	s.Progress = nil
	s.NewtonSteps = 2
	s.MomentTol = 1
	s.Tol = max(s.Tol, sliceTol)
	s.lineCondition = true
	// The shares' sums are first-order in the nodes' spacing whatever the
	// step: the rule is not refined for log Z.
	s.Target = 1
	s.MaxPoints = pairMaxValues
	pr, err := Integrate(ctx, pt, start, s)
	if pt.err != nil {
		return nil, nil, pt.err
	}
	if err != nil {
		return nil, nil, err
	}
	// The pair marginal integrates to the density's integral: where the
	// pair rule's log Z misses the main rule's, it does not resolve the
	// pair (a scale mixture's peak at the origin, as the 3-D funnel's
	// (x1, x2), whose rule missed by 0.47).
	if !(math.Abs(pr.LogZ-res.LogZ) <= pairLogZTol && pr.LogZErr <= pairLogZTol) {
		return nil, nil, fmt.Errorf("%w: the pair rule's log Z is off the main rule's by %.3g (error estimate %.3g)", ErrPairUnresolved, pr.LogZ-res.LogZ, pr.LogZErr)
	}
	dens, mass = NodeShares(pr.Nodes, pr.LogZ, []transform.Map{res.mapOf(i), res.mapOf(j)})
	return dens, mass, nil
}

// NodeShares returns at each node of ns the density on the original scale
// of maps (one per coordinate), normalised by exp(logZ), and the node's
// share of the mass: the weighted points whose sums over a superlevel set
// of the density give the mass it holds (contour levels from a rule's
// nodes).
func NodeShares(ns NodeSet, logZ float64, maps []transform.Map) (dens, mass []float64) {
	n := ns.Len()
	dens, mass = make([]float64, n), make([]float64, n)
	z := make([]float64, len(maps))
	for i := 0; i < n; i++ {
		ns.Point(i, z)
		lj := 0.0
		for k, mp := range maps {
			lj += mp.LogJacobian(z[k])
		}
		// On the original scale: p_x = p_z / |dx/dz|.
		dens[i] = special.Exp(ns.LogP(i) - lj - logZ)
		mass[i] = special.Exp(ns.LogWeight(i) + ns.LogP(i) - logZ)
	}
	return dens, mass
}

// pairMaxValues bounds the values of a pair rule (each a slice's rule).
// pairLogZTol is the largest difference between its log Z and the main
// rule's, and its error estimate, for which PairNodes stands (the slices at
// twice the main rule's step put it 2e-4 high on the 3-D funnel).
const (
	pairMaxValues = 6000
	pairLogZTol   = 0.01
)

// ErrPairUnresolved means a pair rule does not resolve the pair marginal:
// its integral misses the density's.
var ErrPairUnresolved = errors.New("quadrature: the pair marginal is not resolved by its rule")

// pairTarget is the pair marginal of parameters i and j of a result, on
// the unconstrained scale: log of a slice's integral over the others.
// Each value starts its slice's rule from the last one's centre (the pair
// rule's values come line by line). Its derivatives are central
// differences (the pair rule conditions its axes from values, and calls
// them only where that fails). The first error of a slice stops it: every
// value after it is NaN, and PairNodes returns the error.
type pairTarget struct {
	ctx   context.Context
	res   *Result
	i, j  int
	sl    *slice
	guess []float64
	step  [2]float64 // the differences' steps: a twentieth of a sd
	err   error
}

var _ target.Density = (*pairTarget)(nil)

func newPairTarget(ctx context.Context, res *Result, i, j int) *pairTarget {
	d := res.Dim
	t := &pairTarget{ctx: ctx, res: res, i: i, j: j, sl: newSlice(res.p.Clone(), []int{i, j})}
	for a, k := range [2]int{i, j} {
		t.step[a] = math.Sqrt(res.cov[k*d+k]) / 20
	}
	return t
}

func (t *pairTarget) Dim() int { return 2 }

func (t *pairTarget) LogDensity(z []float64) float64 {
	if t.err != nil {
		return math.NaN()
	}
	t.sl.val[0], t.sl.val[1] = z[0], z[1]
	lz, c, err := t.res.sliceLogZ(t.ctx, t.sl, t.guess, slicePlot)
	if err == nil && t.guess != nil && (math.IsNaN(lz) || math.IsInf(lz, 1)) {
		// A slice rule that went astray from the last centre: again from
		// the regression's.
		lz, c, err = t.res.sliceLogZ(t.ctx, t.sl, nil, slicePlot)
	}
	if err != nil {
		t.err = err
		return math.NaN()
	}
	if c != nil {
		t.guess = c
	}
	return lz
}

func (t *pairTarget) LogDensityDerivs(z, grad, hess []float64) float64 {
	f0 := t.LogDensity(z)
	at := func(da, db float64) float64 {
		return t.LogDensity([]float64{z[0] + da*t.step[0], z[1] + db*t.step[1]})
	}
	fp0, fm0, f0p, f0m := at(1, 0), at(-1, 0), at(0, 1), at(0, -1)
	fpp, fmm, fpm, fmp := at(1, 1), at(-1, -1), at(1, -1), at(-1, 1)
	h0, h1 := t.step[0], t.step[1]
	grad[0] = (fp0 - fm0) / (2 * h0)
	grad[1] = (f0p - f0m) / (2 * h1)
	hess[0] = (fp0 - 2*f0 + fm0) / (h0 * h0)
	hess[3] = (f0p - 2*f0 + f0m) / (h1 * h1)
	hess[1] = (fpp - fpm - fmp + fmm) / (4 * h0 * h1)
	hess[2] = hess[1]
	return f0
}

func (t *pairTarget) LogDensityBlock(cols [][]float64, out []float64) {
	z := make([]float64, 2)
	for k := range out {
		z[0], z[1] = cols[0][k], cols[1][k]
		out[k] = t.LogDensity(z)
	}
}

func (t *pairTarget) Clone() target.Density {
	c := newPairTarget(t.ctx, t.res, t.i, t.j)
	return c
}
