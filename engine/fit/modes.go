package fit

import (
	"context"
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/mat"

	"bellcheck/engine/internal/dense"
	"bellcheck/engine/target"
)

// Mode is a local maximum of log p found by FindModes.
type Mode struct {
	X          []float64
	LogDensity float64
	// Hess is the Hessian of log p at X.
	Hess *mat.SymDense
	// PositiveDefinite reports whether -Hess is positive definite and the
	// curvature is not numerically zero (see Flat).
	PositiveDefinite bool
	// Flat reports that -Hess, though positive definite at X, does not
	// describe log p on its own scale: the second difference of log p at a
	// small fraction of the implied standard deviation disagrees with it by
	// more than a factor of two. This is the signature of a zero-curvature
	// mode (exp(-x^4/4) at 0), where Newton's method creeps towards the mode
	// and -Hess tends to zero. PositiveDefinite is false when Flat is true.
	Flat bool
	// OnBound reports that X is within a small tolerance of the box lo/hi
	// (the optimum is pinned by the support).
	OnBound    bool
	Converged  bool
	Iterations int
	// GradNorm is the Euclidean norm of the gradient at X, leaving out
	// components that push against an active bound.
	GradNorm float64
}

// Tolerances of the mode search.
const (
	modeMaxIter = 200
	// decrementTol bounds the Newton decrement gᵀ(-H)⁻¹g, twice the predicted
	// gain in log p, at convergence. It is dimensionless.
	decrementTol = 1e-20
	// boundRelTol is the distance to a bound, relative to the box width
	// (or to max(1, |bound|) for a half-open box), that counts as on it.
	boundRelTol = 1e-9
	// mergeDist is the Mahalanobis distance under -Hess below which two
	// modes count as one.
	mergeDist = 1e-3
	armijo    = 1e-4
	maxHalve  = 60
)

// FindModes polishes every start by a safeguarded Newton method with the
// exact Hessian and returns the distinct local maxima of log p, highest
// first.
//
// Each step solves the Newton system where -H is positive definite; elsewhere
// it uses the modified-Newton direction with the absolute eigenvalues of -H
// (floored at 1e-8 of the largest), Section 3.4 of Nocedal and Wright,
// Numerical Optimization (2006); at a stationary point that is not a maximum
// it leaves along the direction of most negative curvature. A backtracking
// (Armijo) line search keeps log p rising. The iterate stays inside the box
// [lo, hi] by projection, with the coordinates that push against a bound held
// fixed (projected Newton, Bertsekas 1982); lo and hi may be nil (unbounded)
// or hold infinities. Starts outside the box are projected into it; starts
// where log p is -Inf are skipped. Modes closer than 1e-3 standard deviations
// (under -Hess), or joined by a segment along which log p does not dip (where
// the curvature cannot serve), are merged. ctx is checked between
// iterations.
func FindModes(ctx context.Context, p target.Density, starts [][]float64, lo, hi []float64) ([]Mode, error) {
	d := p.Dim()
	if d < 1 {
		return nil, fmt.Errorf("%w: find modes: density has %d dimensions", ErrBadInput, d)
	}
	if len(starts) == 0 {
		return nil, fmt.Errorf("%w: find modes: no starts", ErrBadInput)
	}
	s, err := newPolisher(p, lo, hi)
	if err != nil {
		return nil, err
	}
	var found []Mode
	for k, x0 := range starts {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		if len(x0) != d {
			return nil, fmt.Errorf("%w: find modes: start %d has %d coordinates, want %d", ErrBadInput, k, len(x0), d)
		}
		if !allFinite(x0) {
			return nil, fmt.Errorf("%w: find modes: start %d is %v", ErrNonFinite, k, x0)
		}
		m, ok, err := s.polish(ctx, x0)
		if err != nil {
			return nil, fmt.Errorf("find modes, start %d: %w", k, err)
		}
		if ok {
			found = append(found, m)
		}
	}
	if len(found) == 0 {
		return nil, fmt.Errorf("%w (%d starts)", ErrNoFiniteStart, len(starts))
	}
	sort.SliceStable(found, func(i, j int) bool { return found[i].LogDensity > found[j].LogDensity })
	var modes []Mode
	for _, m := range found {
		dup := false
		for _, kept := range modes {
			if s.sameMode(kept, m) {
				dup = true
				break
			}
		}
		if !dup {
			modes = append(modes, m)
		}
	}
	return modes, nil
}

// polisher holds the state of the Newton search; its buffers are reused for
// every start.
type polisher struct {
	p          target.Density
	d          int
	lo, hi     []float64
	tolb       []float64
	x, g, h    []float64
	xt, gt, ht []float64
	xe, ge, he []float64
	dir, gf    []float64
	a, c       []float64
	free       []int
	probe      []float64
}

func newPolisher(p target.Density, lo, hi []float64) (*polisher, error) {
	d := p.Dim()
	s := &polisher{p: p, d: d,
		lo: make([]float64, d), hi: make([]float64, d), tolb: make([]float64, d),
		x: make([]float64, d), g: make([]float64, d), h: make([]float64, d*d),
		xt: make([]float64, d), gt: make([]float64, d), ht: make([]float64, d*d),
		xe: make([]float64, d), ge: make([]float64, d), he: make([]float64, d*d),
		dir: make([]float64, d), gf: make([]float64, d),
		a: make([]float64, d*d), c: make([]float64, d*d),
		free: make([]int, 0, d), probe: make([]float64, d),
	}
	for i := 0; i < d; i++ {
		s.lo[i], s.hi[i] = math.Inf(-1), math.Inf(1)
	}
	if lo != nil {
		if len(lo) != d {
			return nil, fmt.Errorf("%w: find modes: lo has %d entries, want %d", ErrBadInput, len(lo), d)
		}
		copy(s.lo, lo)
	}
	if hi != nil {
		if len(hi) != d {
			return nil, fmt.Errorf("%w: find modes: hi has %d entries, want %d", ErrBadInput, len(hi), d)
		}
		copy(s.hi, hi)
	}
	for i := 0; i < d; i++ {
		l, u := s.lo[i], s.hi[i]
		if math.IsNaN(l) || math.IsNaN(u) || !(l < u) || math.IsInf(l, 1) || math.IsInf(u, -1) {
			return nil, fmt.Errorf("%w: find modes: box [%v, %v] of parameter %d", ErrBadInput, l, u, i)
		}
		switch {
		case !math.IsInf(l, 0) && !math.IsInf(u, 0):
			s.tolb[i] = boundRelTol * (u - l)
		case !math.IsInf(l, 0):
			s.tolb[i] = boundRelTol * max(1, math.Abs(l))
		case !math.IsInf(u, 0):
			s.tolb[i] = boundRelTol * max(1, math.Abs(u))
		}
	}
	return s, nil
}

func (s *polisher) project(x []float64) {
	for i := range x {
		x[i] = max(s.lo[i], min(s.hi[i], x[i]))
	}
}

// good reports whether f is a usable value of log p for the line search.
func good(f float64) bool { return !math.IsNaN(f) && !math.IsInf(f, 0) }

// polish runs Newton's method from x0. ok is false when log p is -Inf at the
// (projected) start.
func (s *polisher) polish(ctx context.Context, x0 []float64) (m Mode, ok bool, err error) {
	d := s.d
	copy(s.x, x0)
	s.project(s.x)
	f := s.p.LogDensityDerivs(s.x, s.g, s.h)
	switch {
	case math.IsInf(f, -1):
		return Mode{}, false, nil
	case math.IsNaN(f):
		return Mode{}, false, fmt.Errorf("%w: log p is NaN at %v", ErrNonFinite, s.x)
	case math.IsInf(f, 1):
		return Mode{}, false, fmt.Errorf("%w: log p is +Inf at %v", ErrNonFinite, s.x)
	}
	if !allFinite(s.g) || !allFinite(s.h) {
		return Mode{}, false, fmt.Errorf("%w: gradient or Hessian of log p at %v", ErrNonFinite, s.x)
	}
	converged := false
	it := 0
	for ; it < modeMaxIter; it++ {
		if err := ctx.Err(); err != nil {
			return Mode{}, false, err
		}
		dir, newton, dec, negCurv := s.direction()
		if dir == nil {
			converged = true // every coordinate is held by a bound
			break
		}
		if dec <= decrementTol {
			if newton || !negCurv {
				converged = true
				break
			}
		}
		ft, accepted := s.lineSearch(f, dir, newton)
		if !accepted {
			// No rise in log p along an ascent direction: log p is flat to
			// rounding here. That is convergence if the predicted gain is
			// at the rounding level of log p.
			converged = dec <= 1e3*epsilon*max(1, math.Abs(f))
			break
		}
		small := true
		for i := 0; i < d; i++ {
			if math.Abs(s.xt[i]-s.x[i]) > 4*epsilon*max(math.Abs(s.x[i]), math.Abs(s.xt[i])) {
				small = false
			}
		}
		copy(s.x, s.xt)
		copy(s.g, s.gt)
		copy(s.h, s.ht)
		f = ft
		if small {
			converged = true
			it++
			break
		}
	}
	m = Mode{X: append([]float64(nil), s.x...), LogDensity: f, Hess: symFromSlice(s.h, d),
		Converged: converged, Iterations: it}
	s.activeSet()
	gn := 0.0
	for _, i := range s.free {
		gn += s.g[i] * s.g[i]
	}
	m.GradNorm = math.Sqrt(gn)
	for i := 0; i < d; i++ {
		if s.x[i]-s.lo[i] <= s.tolb[i] || s.hi[i]-s.x[i] <= s.tolb[i] {
			m.OnBound = true
		}
	}
	for i := range s.a {
		s.a[i] = -s.h[i]
	}
	symmetrize(s.a, d)
	if cholesky(s.c, s.a, d) {
		m.Flat = s.flat(f)
		m.PositiveDefinite = !m.Flat
	}
	return m, true, nil
}

const epsilon = 0x1p-52

// activeSet fills s.free with the coordinates not held by a bound: those
// away from their bounds, or at a bound with the gradient pointing inwards.
func (s *polisher) activeSet() {
	s.free = s.free[:0]
	for i := 0; i < s.d; i++ {
		atLo := s.x[i]-s.lo[i] <= s.tolb[i] && s.g[i] < 0
		atHi := s.hi[i]-s.x[i] <= s.tolb[i] && s.g[i] > 0
		if !atLo && !atHi {
			s.free = append(s.free, i)
		}
	}
}

// direction returns the search direction in s.dir (zero on held
// coordinates), whether it is the Newton direction, the Newton decrement
// gᵀ M⁻¹ g with the matrix M used, and whether the free block has a
// direction of positive curvature of log p (used when g is zero). It
// returns a nil direction when every coordinate is held.
func (s *polisher) direction() (dir []float64, newton bool, dec float64, negCurv bool) {
	s.activeSet()
	n := len(s.free)
	if n == 0 {
		return nil, false, 0, false
	}
	d := s.d
	a, c, gf := s.a[:n*n], s.c[:n*n], s.gf[:n]
	for r, i := range s.free {
		gf[r] = s.g[i]
		for q, j := range s.free {
			a[r*n+q] = -0.5 * (s.h[i*d+j] + s.h[j*d+i])
		}
	}
	for i := range s.dir {
		s.dir[i] = 0
	}
	if cholesky(c, a, n) {
		step := s.probe[:n]
		copy(step, gf)
		cholSolve(c, step, n)
		for r, i := range s.free {
			s.dir[i] = step[r]
			dec += gf[r] * step[r]
		}
		return s.dir, true, dec, false
	}
	// Modified Newton: -H with its eigenvalues replaced by their absolute
	// values, floored. This case is rare, so the eigensolver's slices are
	// allocated here.
	vals, vecs := make([]float64, n), make([]float64, n*n)
	if !dense.EigenSym(vals, vecs, a, n) {
		// Fall back to steepest ascent.
		for r, i := range s.free {
			s.dir[i] = gf[r]
			dec += gf[r] * gf[r]
		}
		return s.dir, false, dec, false
	}
	big := 0.0
	for _, v := range vals {
		big = max(big, math.Abs(v))
	}
	floor := 1e-8 * big
	if floor == 0 {
		floor = 1
	}
	mostNeg, kNeg := 0.0, -1
	for k, v := range vals {
		if v < -floor && v < mostNeg {
			mostNeg, kNeg = v, k
		}
		proj := 0.0
		for r := 0; r < n; r++ {
			proj += vecs[r*n+k] * gf[r]
		}
		scale := 1 / max(math.Abs(v), floor)
		for r, i := range s.free {
			s.dir[i] += vecs[r*n+k] * proj * scale
		}
		dec += proj * proj * scale
	}
	if dec <= decrementTol && kNeg >= 0 {
		// A stationary point that is not a maximum: leave along the
		// eigenvector of positive curvature of log p, one implied length
		// scale, uphill if the gradient tells which way is up.
		sign, proj := 1.0, 0.0
		for r := 0; r < n; r++ {
			proj += vecs[r*n+kNeg] * gf[r]
		}
		if proj < 0 {
			sign = -1
		}
		length := sign / math.Sqrt(-mostNeg)
		for i := range s.dir {
			s.dir[i] = 0
		}
		for r, i := range s.free {
			s.dir[i] = vecs[r*n+kNeg] * length
		}
		return s.dir, false, dec, true
	}
	return s.dir, false, dec, kNeg >= 0
}

// lineSearch tries x + t dir (projected) for t = 1, 1/2, ... until log p
// rises by the Armijo condition, writing the point and its derivatives into
// xt, gt, ht. Near the optimum the gain in log p falls below its rounding,
// so a full Newton step is also accepted where log p stays level to
// rounding and the gradient shrinks. For other directions, whose length is
// not to scale, it keeps doubling t while log p keeps rising once the full
// step is accepted.
func (s *polisher) lineSearch(f float64, dir []float64, newton bool) (float64, bool) {
	t := 1.0
	for k := 0; k < maxHalve; k++ {
		ft, ok := s.try(f, dir, t, s.xt, s.gt, s.ht)
		if !ok && newton && k == 0 && good(ft) && ft >= f-64*epsilon*max(1, math.Abs(f)) {
			ok = s.freeNorm(s.gt) < s.freeNorm(s.g)
		}
		if !ok {
			t /= 2
			continue
		}
		if !newton && k == 0 {
			for e := 0; e < 40; e++ {
				t *= 2
				fe, oke := s.try(f, dir, t, s.xe, s.ge, s.he)
				if !oke || !(fe > ft) {
					break
				}
				copy(s.xt, s.xe)
				copy(s.gt, s.ge)
				copy(s.ht, s.he)
				ft = fe
			}
		}
		return ft, true
	}
	return f, false
}

// freeNorm returns the Euclidean norm of g over the free coordinates.
func (s *polisher) freeNorm(g []float64) float64 {
	n := 0.0
	for _, i := range s.free {
		n += g[i] * g[i]
	}
	return math.Sqrt(n)
}

// try evaluates the projected point x + t dir into xo, go, ho and reports
// whether log p there is finite and above f by the Armijo condition.
func (s *polisher) try(f float64, dir []float64, t float64, xo, gout, hout []float64) (float64, bool) {
	gain := 0.0
	for i := range xo {
		xo[i] = s.x[i] + t*dir[i]
	}
	s.project(xo)
	for i := range xo {
		gain += s.g[i] * (xo[i] - s.x[i])
	}
	ft := s.p.LogDensityDerivs(xo, gout, hout)
	if !good(ft) || !allFinite(gout) || !allFinite(hout) {
		return ft, false
	}
	return ft, ft > f+armijo*max(gain, 0)
}

// flat reports whether log p departs from the quadratic model of -H (held
// in s.a, positive definite) within a small fraction of the implied
// standard deviation, probing along each eigenvector. Probes that leave the
// box or meet a non-finite log p are skipped.
func (s *polisher) flat(f float64) bool {
	d := s.d
	vals, vecs := make([]float64, d), make([]float64, d*d)
	if !dense.EigenSym(vals, vecs, s.a, d) {
		return false
	}
	// The probe is 1e-3 of the implied sd, longer where log p is so large
	// that rounding would swamp the second difference.
	frac := max(1e-3, min(0.1, math.Sqrt(1e4*epsilon*max(1, math.Abs(f)))))
	for k, mu := range vals {
		h := frac / math.Sqrt(mu)
		fp, okp := s.probeAt(vecs, k, h)
		fm, okm := s.probeAt(vecs, k, -h)
		if !okp || !okm {
			continue
		}
		ratio := -(fp + fm - 2*f) / (mu * h * h)
		if !(ratio > 0.5 && ratio < 2) {
			return true
		}
	}
	return false
}

func (s *polisher) probeAt(vecs []float64, k int, h float64) (float64, bool) {
	d := len(s.probe)
	for i := range s.probe {
		s.probe[i] = s.x[i] + h*vecs[i*d+k]
		if s.probe[i] < s.lo[i] || s.probe[i] > s.hi[i] {
			return 0, false
		}
	}
	f := s.p.LogDensity(s.probe)
	return f, good(f)
}

// sameMode reports whether the candidate m duplicates the kept mode, which
// has the higher log p.
func (s *polisher) sameMode(kept, m Mode) bool {
	switch {
	case kept.PositiveDefinite:
		return mahalanobisHess(kept.Hess, kept.X, m.X) <= mergeDist
	case m.PositiveDefinite:
		return mahalanobisHess(m.Hess, kept.X, m.X) <= mergeDist
	}
	// Neither curvature can serve: the same mode if log p does not dip
	// along the segment between them.
	floor := m.LogDensity - 1e-10*max(1, math.Abs(m.LogDensity))
	for k := 1; k < 8; k++ {
		t := float64(k) / 8
		for i := range s.probe {
			s.probe[i] = kept.X[i] + t*(m.X[i]-kept.X[i])
		}
		f := s.p.LogDensity(s.probe)
		if !(f >= floor) {
			return false
		}
	}
	return true
}

// mahalanobisHess returns the distance between x and y under the metric -h.
func mahalanobisHess(h *mat.SymDense, x, y []float64) float64 {
	q := 0.0
	for i := range x {
		for j := range x {
			q -= (y[i] - x[i]) * h.At(i, j) * (y[j] - x[j])
		}
	}
	return math.Sqrt(max(q, 0))
}
