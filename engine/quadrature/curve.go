package quadrature

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"

	"bellcheck/engine/special"
	"bellcheck/engine/transform"
)

// Curve is one parameter's marginal density sampled at the nodes of its
// own node map (z = c + w phi(t), t = jh), each node a nested rule over
// the other parameters. The sinc interpolant of the samples (whose
// integral the trapezoid rule is) gives the density anywhere between them
// and the distribution function, both converging as fast as the rule
// (Stenger, "Numerical methods based on sinc and analytic functions",
// 1993, sections 1.10 and 3.2): one walk serves the quantiles and the
// plotted marginal.
type Curve struct {
	lv    nodeMap
	c, h  float64
	lo    int       // index of g[0] (t = lo h)
	g     []float64 // the marginal's share per unit t at the nodes
	total float64   // h sum g: the marginal's mass (near 1)
	mp    transform.Map
}

// Curve walks parameter k's marginal out from the centre until it is
// negligible. fine selects the slices' step: the rule's own (for the
// quantiles in 1-D and 2-D, where a slice is cheap) or twice it (a
// relative error of 2e-4 at worst on the test cases, far in a funnel's
// tail).
func (res *Result) Curve(ctx context.Context, k int, fine bool) (*Curve, error) {
	if res.Improper {
		return nil, ErrImproper
	}
	if k < 0 || k >= res.Dim {
		return nil, fmt.Errorf("quadrature: parameter %d of %d", k+1, res.Dim)
	}
	if res.outer != nil && k == res.Order[0] {
		return res.outer, nil
	}
	s := res.settings.withDefaults()
	h := s.Step
	cv := &Curve{lv: res.marginalMap(k), c: res.centre[k], h: h, mp: res.mapOf(k)}
	sl := newSlice(res.p.Clone(), []int{k})
	acc := sliceCoarse
	if fine {
		acc = sliceFine
	}
	var guess []float64
	err := cv.walk(int(s.MaxT/h), func(_ int, z float64, first bool) (float64, error) {
		if first {
			guess = nil
		}
		sl.val[0] = z
		lz, cen, err := res.sliceLogZ(ctx, sl, guess, acc)
		if err == nil && guess != nil && (math.IsNaN(lz) || math.IsInf(lz, 1)) {
			// A slice rule that went astray from the previous node's
			// centre: again from the regression's.
			lz, cen, err = res.sliceLogZ(ctx, sl, nil, acc)
		}
		guess = cen
		return lz - res.LogZ, err
	})
	if err != nil {
		return nil, err
	}
	tol := curveMassTol
	if !fine {
		tol = curveMassTolCoarse
	}
	if n := len(cv.g); n < minCurveNodes || !(math.Abs(cv.total-1) <= tol) {
		return nil, fmt.Errorf("%w: parameter %d's marginal over %d nodes holds %g of the mass", ErrCurve, k+1, n, cv.total)
	}
	return cv, nil
}

// walk fills the curve's nodes out from the centre on each side until the
// marginal's share is negligible (below 1e-12 of its peak and falling) or
// the walk reaches maxJ: logAt gives the log of the marginal's density on
// the unconstrained scale at node j, z (normalised), first true at each
// side's first node. It sets lo, g and total.
func (cv *Curve) walk(maxJ int, logAt func(j int, z float64, first bool) (float64, error)) error {
	em := expm1TableFor(cv.h, maxJ)
	g := make([]float64, 2*maxJ+1)
	lo, hi := 0, 0
	peak := 0.0
	for _, side := range [2]int{1, -1} {
		j := 0
		if side < 0 {
			j = -1
		}
		for first := true; j >= -maxJ && j <= maxJ; j, first = j+side, false {
			lz, err := logAt(j, cv.c+cv.lv.offsetAt(j, em), first)
			if err != nil {
				return err
			}
			v := special.Exp(lz) * cv.lv.jacAt(j, em)
			if math.IsNaN(v) {
				v = 0
			}
			g[j+maxJ] = v
			peak = max(peak, v)
			lo, hi = min(lo, j), max(hi, j)
			if j != 0 && v <= 1e-12*peak && v <= g[j-side+maxJ] {
				break
			}
		}
	}
	cv.lo = lo
	cv.g = g[lo+maxJ : hi+1+maxJ]
	cv.total = 0
	for _, v := range cv.g {
		cv.total += cv.h * v
	}
	return nil
}

// outerCurve returns the marginal of the outermost axis's parameter from
// the rule's sums, or nil in 1-D or where the walk is too short: the
// parameter's coordinate is z = m + L00 u (L is lower triangular), so at
// each node of the outer axis the inner rule's integral is the marginal
// density of u there, and the outer axis's node map (scaled by L00) is a
// node map of z. s0 is the rule's sum (the normalisation). The walk needs
// no slices: it is the finest rule's own, at its step.
func (r *rule) outerCurve(s0 float64) *Curve {
	if r.outer == nil {
		return nil
	}
	lv := &r.lv[0]
	lo, hi := r.outerLo, r.outerHi
	l00 := r.L[0]
	cv := &Curve{
		lv: lv.nodeMap, c: r.m[0] + l00*lv.c, h: r.h, lo: lo, mp: r.maps[0],
		g: make([]float64, hi-lo+1),
	}
	cv.lv.w *= l00
	for j := lo; j <= hi; j++ {
		v := r.outer[j+r.maxJ] / s0
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil
		}
		cv.g[j-lo] = v
		cv.total += r.h * v
	}
	if len(cv.g) < minCurveNodes {
		return nil
	}
	return cv
}

// ErrCurve means a marginal's walk does not resolve it: too few nodes
// (a marginal far more peaked than the parameter's sd, as a funnel's
// location at its neck) or a mass off 1 by more than curveMassTol (or
// curveMassTolCoarse).
var ErrCurve = errors.New("quadrature: the marginal is not resolved at the rule's nodes")

// minCurveNodes and curveMassTol: see ErrCurve. Slices at twice the
// rule's step (Curve's fine false) carry a bias of their own, common to the
// nodes and so cancelling in the quantiles (the 4-D clock example's walks
// held 1.0003 to 1.0006 of the mass): curveMassTolCoarse for them. The
// failures the check is for are gross: the funnel's x held 2.6, the long
// Lorenz-63 cost's walks 0.14 to 0.5.
const (
	minCurveNodes      = 8
	curveMassTol       = 1e-4
	curveMassTolCoarse = 2e-3
)

// Mass returns the integral of the sampled marginal: near 1, a check of
// the slices against LogZ.
func (cv *Curve) Mass() float64 { return cv.total }

// Density returns the marginal density on the original scale at xs (0
// outside the support), normalised by the walk's own mass.
func (cv *Curve) Density(xs []float64) []float64 {
	out := make([]float64, len(xs))
	last := math.NaN()
	for i, x := range xs {
		z := cv.mp.FromOriginal(x)
		if math.IsNaN(z) || math.IsInf(z, 0) {
			continue
		}
		t, jac := cv.lv.inverse(z-cv.c, cv.h*float64(cv.lo), cv.h*float64(cv.lo+len(cv.g)-1), last)
		last = t
		// sin(pi (s - j)) = (-1)^j sin(pi s) for s = t/h - lo and integer
		// j: one sine a point, not one a node (math.Sin is pure Go under
		// WebAssembly), and no rounding of a large argument.
		s0 := t/cv.h - float64(cv.lo)
		sinS := math.Sin(math.Pi * s0)
		gt := 0.0
		for j, gj := range cv.g {
			u := math.Pi * (s0 - float64(j))
			if math.Abs(u) < 1e-9 {
				gt += gj
			} else if j&1 == 0 {
				gt += gj * sinS / u
			} else {
				gt -= gj * sinS / u
			}
		}
		// Share per unit t to density in z, then in x, over the walk's
		// own mass (which cancels the slices' bias where it is common to
		// the nodes, as at twice the rule's step); the interpolant's
		// ringing far out (of the order of the rule's error) is cut at 0.
		v := gt / cv.total / jac / special.Exp(cv.mp.LogJacobian(z))
		if v > 0 && !math.IsInf(v, 0) {
			out[i] = v
		}
	}
	return out
}

// Quantiles returns the quantiles at the probabilities probs on the
// original scale (a monotone map keeps them). The distribution function at
// the nodes is the integral of the sinc interpolant, C(t_k) = h sum_i g_i
// (1/2 + Si(pi (k - i))/pi); it is inverted on the cubic Hermite
// interpolant of the sinc interpolant's C and g at eight steps between
// nodes.
func (cv *Curve) Quantiles(probs []float64) []float64 {
	gg, h := cv.g, cv.h
	n := len(gg)
	// The interpolant's integral at the nodes, where the search needs it:
	// each takes a sum over every node, so the search starts at the
	// crossing of the trapezoid rule's running sum, which is within a node
	// or two of the interpolant's on any curve the walk accepts.
	cdf := make(map[int]float64)
	cdfAt := func(i int) float64 {
		c, ok := cdf[i]
		if !ok {
			_, c = sincAt(gg, h, i, 0)
			cdf[i] = c
		}
		return c
	}
	run := make([]float64, n)
	for i := 1; i < n; i++ {
		run[i] = run[i-1] + h*(gg[i-1]+gg[i])/2
	}
	out := make([]float64, len(probs))
	var sv, sc [siSub + 1]float64
	for pi, p := range probs {
		target := p * cv.total
		// The first node i with the interpolant's integral at i+1 at
		// least target (the integral increases where the mass is).
		i, _ := slices.BinarySearch(run, target)
		i = max(0, min(i-1, n-2))
		for i > 0 && cdfAt(i) >= target {
			i--
		}
		for i < n-2 && cdfAt(i+1) < target {
			i++
		}
		for f := 0; f <= siSub; f++ {
			sv[f], sc[f] = sincAt(gg, h, i, f)
		}
		f := 0
		for f < siSub-1 && sc[f+1] < target {
			f++
		}
		hs := h / siSub
		herm := func(s float64) float64 {
			s2, s3 := s*s, s*s*s
			return (2*s3-3*s2+1)*sc[f] + (s3-2*s2+s)*hs*sv[f] + (-2*s3+3*s2)*sc[f+1] + (s3-s2)*hs*sv[f+1]
		}
		a, b := 0.0, 1.0
		for it := 0; it < 60; it++ {
			m := (a + b) / 2
			if herm(m) < target {
				a = m
			} else {
				b = m
			}
		}
		t := (float64(cv.lo+i) + (float64(f)+(a+b)/2)/siSub) * h
		out[pi] = cv.mp.ToOriginal(cv.c + cv.lv.offset(t))
	}
	return out
}

// inverse returns the t in [tlo - 8, thi + 8] where offset(t) = u (offset
// is increasing), and the map's Jacobian there, by Newton's method kept
// inside a bracket that each step narrows (a bisection step where Newton's
// leaves it): a handful of steps where bisection to 1e-13 took about 45.
// Each step takes the map's two exponentials once for the offset and the
// Jacobian. guess, when inside the bracket, is the first iterate (the last
// plot point's t: the points come in order); otherwise the sinh map's
// inverse or the linear one's.
func (lv *nodeMap) inverse(u, tlo, thi, guess float64) (t, jac float64) {
	a, b := tlo-8, thi+8
	t = u / lv.w // the linear map's inverse, and sinh's near the centre
	if lv.betaL == 0.5 && lv.betaR == 0.5 {
		t = math.Asinh(u / lv.w)
	} else if guess > a && guess < b {
		t = guess
	}
	if !(t > a && t < b) {
		t = (a + b) / 2
	}
	for it := 0; it < 100; it++ {
		ep, en := lv.expm1s(t)
		f := lv.offsetWith(t, ep, en) - u
		jac = lv.jacWith(ep, en)
		if f < 0 {
			a = t
		} else {
			b = t
		}
		next := t - f/jac
		if !(next > a && next < b) {
			next = (a + b) / 2
		}
		if math.Abs(next-t) <= 1e-15*(1+math.Abs(t)) || b-a <= 1e-13*(1+math.Abs(a)) {
			// The Jacobian at t, within a relative 1e-15 of next's.
			return next, jac
		}
		t = next
	}
	return t, lv.jac(t)
}
