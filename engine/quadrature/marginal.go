package quadrature

import (
	"bellcheck/engine/internal/dense"
	"context"
	"errors"
	"fmt"
	"math"

	"bellcheck/engine/special"
	"bellcheck/engine/transform"
)

// ErrImproper is returned by the marginals of an improper density.
var ErrImproper = errors.New("quadrature: the density is improper")

// Accuracy of the rules that integrate the other axes at a point of a
// marginal or a pair.
type sliceAccuracy int

const (
	// sliceFine: the rule's own step and tolerances.
	sliceFine sliceAccuracy = iota
	// sliceCoarse: twice the main step (a relative error of 2e-4 at worst
	// on the test cases, far in a funnel's tail: below what a plot shows).
	sliceCoarse
	// slicePlot: twice the main step, walks ended where the density's
	// share falls below 1e-9 of its peak and two Newton steps
	// recentring each inner axis (the previous point's centre is the
	// guess; one step left the 3-D funnel's pair 1e-3 off at its peak).
	slicePlot
)

// sliceTol ends a slice's walks where the density's share falls below
// it of the walk's peak (the main rule's Tol is 1e-10): the slices'
// integrals serve marginals and pairs, whose quantiles moved by 2e-11 sd
// at most on the reference cases and the benchmarks against slices ended
// at 1e-12, their plotted densities by 1e-11 of the peak, while the 3-D
// sensor and the 3-D regression took about 12 and 18 % less CPU time.
const sliceTol = 1e-9

// sliceNewtonSteps bounds the Newton steps of a marginal's slices (see
// sliceSettings).
const sliceNewtonSteps = 4

// sliceSettings are the settings of the rules that integrate the free
// axes of sl at a plot point (see sliceAccuracy), with no pilot.
func (res *Result) sliceSettings(sl *slice, acc sliceAccuracy) Settings {
	s := res.settings.withDefaults()
	if acc != sliceFine && !res.start.NoMode {
		// A density with no mode on the unconstrained scale (a
		// hierarchical scale on its bound) keeps the rule's step: at twice
		// it the slices follow the funnel's neck less well (a group
		// model's pair of effects was 30 % off in places, at the rule's
		// step 2e-4 of its peak).
		s.Step *= 2
	}
	// The slices of neighbouring points have nearby conditional modes
	// (each starts from the last one's centre): a few Newton steps
	// recentre them; a Newton step costs a Hessian, most of a slice's time
	// on a costly density.
	s.NewtonSteps = sliceNewtonSteps
	// A slice's integral is all its callers take: its walks end where the
	// density's share is negligible, not where the moments' are.
	s.MomentTol = 1
	s.Tol = max(s.Tol, sliceTol)
	s.keepMaps = true
	if acc == slicePlot {
		s.NewtonSteps = 2
	}
	s.Order = sliceOrder(res.Order, sl.free)
	s.Maps = nil
	s.Progress = nil
	return s
}

// sliceOrder returns the axis order of a slice's rule over the free
// parameters (indices into free): the main rule's order without the fixed
// ones. The main rule puts a scale outside, where each of its nodes
// rescales the others, so a slice does too: the 3-D regression's slices
// over (b, s) took b outside, whose conditional given a alone is a
// Student t, and walked it 57 nodes at 3,201 points a slice; with s
// outside, b's conditional given s is a normal.
func sliceOrder(order, free []int) []int {
	out := make([]int, 0, len(free))
	for _, k := range order {
		for i, f := range free {
			if f == k {
				out = append(out, i)
			}
		}
	}
	if len(out) != len(free) {
		return identityOrder(len(free))
	}
	return out
}

// NoMode reports that the rule started from a Start with NoMode set: the
// density has no mode on the unconstrained scale.
func (res *Result) NoMode() bool { return res.start.NoMode }

// mapOf returns parameter k's map to the original scale.
func (res *Result) mapOf(k int) transform.Map {
	if res.settings.Maps != nil {
		return res.settings.Maps[k]
	}
	return transform.Map{Scale: transform.Identity, Lo: math.Inf(-1), Hi: math.Inf(1)}
}

// sliceLogZ returns log of the integral of p over the coordinates other
// than sl.fixed (at sl.val), and the conditional centre it found (for the
// next point's guess). guess may be nil.
func (res *Result) sliceLogZ(ctx context.Context, sl *slice, guess []float64, acc sliceAccuracy) (float64, []float64, error) {
	return res.sliceLogZAt(ctx, sl, guess, acc, math.NaN())
}

// usableGuess reports whether a pair's slice may start from guess, the
// centre the slice before it in the image's column found: where the
// density has a mode and guess lies within guessReach of the main rule's
// Gaussian conditional sds from that conditional's mean. A column crosses
// the whole image, and a centre found far out belonged to another part of
// the density: a rule started there lost the mass of this slice. On the
// short Lorenz-63 cost, whose slices are multimodal, the pair (x0, y0)
// was 1e-8 where a quadrature of the slice over z0 gave 0.0105 (0.55 of
// the peak), a chain of starts having wandered into another mode. Where
// the density has no mode (a hierarchical scale on its bound) the centre
// a slice's rule finds is down the funnel's neck, not a mode: on two
// sites' Poisson counts with site effects under a half-normal sd, slices
// started from their neighbours' centres left the pair (a, e2) at 0 in
// places where a quadrature of ours gives 0.05 (the body of the pair,
// above its 86 % contour), and 209 of its image's points near the 99 %
// contour (at 49 points a side, upsampled) more than 10 % off; from the
// conditional, 7 (next to e2 = 0, where the pair density has a
// logarithmic ridge), in three quarters of the time. (A marginal's walk,
// Curve, keeps its chain: it runs outward from the centre, and the 4-D
// funnel benchmark's c had its 2.5 % quantile 2.4e-4 further from a
// tensor trapezoid's without it.)
func (res *Result) usableGuess(sl *slice, guess []float64) bool {
	if guess == nil || res.start.NoMode {
		return false
	}
	mean, cov, ok := conditional(res.centre, res.cov, res.Dim, sl.fixed, sl.free, sl.val)
	if !ok {
		return false
	}
	n := len(sl.free)
	c := make([]float64, n*n)
	if !cholesky(c, cov, n) {
		return false
	}
	dv := make([]float64, n)
	for i := range dv {
		dv[i] = guess[i] - mean[i]
	}
	dense.ForwardSolve(c, dv, n)
	m2 := 0.0
	for _, v := range dv {
		m2 += v * v
	}
	return m2 <= guessReach*guessReach
}

// guessReach is the farthest a slice's start may be from the main rule's
// Gaussian conditional mean, in its sds (usableGuess). At 2 the short
// Lorenz-63 cost's pairs were within 7.4e-4 of their peaks of a quadrature
// of the slices over the third parameter at the points where starting
// from the neighbours' centres and from the conditional differed most; at
// 3, 1.6e-3; at 5, 4e-3; from the conditional always, 0.039 (the pair (y0,
// z0), whose slices' nodes, spaced for the conditional, did not resolve a
// narrow peak that the neighbours' centres led to).
const guessReach = 2

// sliceLogZAt is sliceLogZ with the shares taken relative to ref (log p at
// the start where ref is NaN).
func (res *Result) sliceLogZAt(ctx context.Context, sl *slice, guess []float64, acc sliceAccuracy, ref float64) (float64, []float64, error) {
	d := res.Dim
	if len(sl.free) == 0 {
		return sl.LogDensity(nil), nil, nil
	}
	mean, cov, ok := conditional(res.centre, res.cov, d, sl.fixed, sl.free, sl.val)
	if !ok {
		return math.Inf(-1), nil, nil
	}
	if guess != nil {
		mean = guess
	}
	st := Start{Mode: mean, Cov: cov}
	r, err := newRule(ctx, sl, st, res.sliceSettings(sl, acc))
	if err == nil {
		r.noNodes = true
		r.pilot = res.start.NoMode
		if !math.IsNaN(ref) {
			r.ref = ref
		}
	}
	if err != nil {
		if errors.Is(err, ErrBadStart) && guess != nil {
			return res.sliceLogZ(ctx, sl, nil, acc)
		}
		if errors.Is(err, ErrBadStart) {
			return math.Inf(-1), nil, nil // log p is -Inf or undefined at the guess: no mass there
		}
		return 0, nil, err
	}
	defer r.release() // nothing returned refers to its scratch
	if err := r.run(); err != nil {
		return 0, nil, err
	}
	s0 := r.lv[0].sum[0][0]
	if !(s0 > 0) {
		return math.Inf(-1), nil, nil
	}
	// The centre found: z = m + L mode (axis order = free order).
	c := make([]float64, len(sl.free))
	r.toZ(r.lv[0].mode)
	copy(c, r.z)
	if math.IsInf(s0, 1) && math.IsNaN(ref) {
		// The shares are taken relative to log p at the start; a start far
		// from the conditional mode lets them overflow (a Student t's
		// location far out, whose scale's conditional moves with it: x off
		// by 19 of its sds; a group effect's pair far out, whose slice
		// started with the shared scale near 0). Once more from the centre
		// the rule found, relative to the largest log p its lines met.
		return res.sliceLogZAt(ctx, sl, c, acc, r.top)
	}
	return r.ref + r.ldL + math.Log(s0), c, nil
}

// Marginal returns the marginal density of parameter k on the original
// scale at the points xs, each by integrating the other parameters (a
// nested rule on the conditional slice), normalised by exp(LogZ); NaN at
// a point where the slice's rule does not resolve it.
func (res *Result) Marginal(ctx context.Context, k int, xs []float64) ([]float64, error) {
	if res.Improper {
		return nil, ErrImproper
	}
	if k < 0 || k >= res.Dim {
		return nil, fmt.Errorf("quadrature: parameter %d of %d", k+1, res.Dim)
	}
	mp := res.mapOf(k)
	sl := newSlice(res.p.Clone(), []int{k})
	out := make([]float64, len(xs))
	var guess []float64
	for i, x := range xs {
		z := mp.FromOriginal(x)
		if math.IsNaN(z) || math.IsInf(z, 0) {
			guess = nil
			continue
		}
		sl.val[0] = z
		lz, c, err := res.sliceLogZ(ctx, sl, guess, sliceCoarse)
		if err == nil && (math.IsNaN(lz) || math.IsInf(lz, 1)) {
			// A slice rule that went astray from the previous point's
			// centre: again from the regression's, at the rule's step.
			lz, c, err = res.sliceLogZ(ctx, sl, nil, sliceFine)
		}
		if err != nil {
			return nil, err
		}
		guess = c
		out[i] = special.Exp(lz - res.LogZ - mp.LogJacobian(z))
		if math.IsInf(out[i], 1) {
			out[i] = math.NaN() // not resolved at this point: left out
		}
	}
	return out, nil
}

// Pair returns the pair-marginal density of parameters i and j on the
// original scale at the grid xs × ys, row-major (element a*len(ys)+b at
// (xs[a], ys[b])), each point by integrating the other parameters.
func (res *Result) Pair(ctx context.Context, i, j int, xs, ys []float64) ([]float64, error) {
	if res.Improper {
		return nil, ErrImproper
	}
	if i < 0 || j < 0 || i >= res.Dim || j >= res.Dim || i == j {
		return nil, fmt.Errorf("quadrature: parameters %d and %d of %d", i+1, j+1, res.Dim)
	}
	mi, mj := res.mapOf(i), res.mapOf(j)
	if res.Dim == 2 {
		return res.pairDirect(ctx, i, j, xs, ys)
	}
	sl := newSlice(res.p.Clone(), []int{i, j})
	out := make([]float64, len(xs)*len(ys))
	for a, x := range xs {
		zi := mi.FromOriginal(x)
		var guess []float64
		for b, y := range ys {
			zj := mj.FromOriginal(y)
			if math.IsNaN(zi) || math.IsInf(zi, 0) || math.IsNaN(zj) || math.IsInf(zj, 0) {
				guess = nil
				continue
			}
			sl.val[0], sl.val[1] = zi, zj
			if !res.usableGuess(sl, guess) {
				guess = nil
			}
			lz, c, err := res.sliceLogZ(ctx, sl, guess, slicePlot)
			if err != nil {
				return nil, err
			}
			guess = c
			out[a*len(ys)+b] = special.Exp(lz - res.LogZ - mi.LogJacobian(zi) - mj.LogJacobian(zj))
		}
	}
	return out, nil
}

// pairDirect is Pair with two parameters: the density itself, a row of
// the grid at a time in one block (a point at a time, the 2-D dose
// example's pair took a sixth of its analysis).
func (res *Result) pairDirect(ctx context.Context, i, j int, xs, ys []float64) ([]float64, error) {
	mi, mj := res.mapOf(i), res.mapOf(j)
	p := res.p.Clone()
	out := make([]float64, len(xs)*len(ys))
	cols := [][]float64{make([]float64, 0, len(ys)), make([]float64, 0, len(ys))}
	at := make([]int, 0, len(ys)) // the row's points inside the support
	lp := make([]float64, len(ys))
	for a, x := range xs {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		zi := mi.FromOriginal(x)
		if math.IsNaN(zi) || math.IsInf(zi, 0) {
			continue
		}
		cols[i], cols[j], at = cols[i][:0], cols[j][:0], at[:0]
		for b, y := range ys {
			zj := mj.FromOriginal(y)
			if math.IsNaN(zj) || math.IsInf(zj, 0) {
				continue
			}
			cols[i], cols[j], at = append(cols[i], zi), append(cols[j], zj), append(at, b)
		}
		if len(at) == 0 {
			continue
		}
		p.LogDensityBlock(cols, lp[:len(at)])
		base := res.LogZ + mi.LogJacobian(zi)
		for n, b := range at {
			out[a*len(ys)+b] = special.Exp(lp[n] - base - mj.LogJacobian(cols[j][n]))
		}
	}
	return out, nil
}
