package quadrature

import (
	"math"

	"bellcheck/engine/special"
)

// endCheck decides whether the walk along axis k ends at the node just
// added (|t| = at), whose watched components are cur (those of the node
// before it: prev; their largest so far: peak). A walk ends where the
// density's share is below Tol of its peak and falling, and each second
// and fourth power's share is below MomentTol of its peak or decays too
// slowly to ever get there (an infinite moment), or at MaxT. At the end it
// adds the geometric tail beyond the node to the remainders (exact for a
// share decaying exponentially in t, the case of every algebraic or faster
// tail) and flags the components whose share does not decay.
// It returns whether the walk ends and the density's remainder.
func (r *rule) endCheck(k int, cur, prev, peak []float64, at float64, first bool) (bool, float64) {
	atMax := at+r.h/2 > r.s.MaxT
	if first && !atMax {
		return false, 0
	}
	// ratio is component c's decay over the last step, cur / prev =
	// e^(slope h) for the slope of its log in t (0 where the share vanished,
	// +Inf where the node before had none); a share decays (slope <
	// -minRate) where the ratio is below qMin, two shares on average where
	// the product of their ratios is below qMin^2. Ratios, not logs: the
	// walks' ends took an eighth of the 4-D clock example's time in
	// math.Log and math.Exp.
	ratio := func(c int) float64 {
		switch {
		case first || cur[c] <= 0:
			return 0
		case prev[c] <= 0:
			return math.Inf(1)
		}
		return cur[c] / prev[c]
	}
	qMin := special.Exp(-minRate * r.h)
	zSmall := cur[0] <= r.s.Tol*peak[0] && !math.IsInf(cur[0], 1) && (first || cur[0] <= prev[0])
	if !atMax {
		if !zSmall {
			return false, 0
		}
		for c := 1; c < len(cur); c++ {
			if cur[c] > r.momentTol(c)*peak[c] && ratio(c) < qMin {
				return false, 0
			}
		}
		// The first powers, between the density and the second powers.
		for c := 1; c < len(cur); c += 2 {
			if g, p := math.Sqrt(cur[0]*cur[c]), math.Sqrt(peak[0]*peak[c]); g > r.s.MomentTol*p && ratio(0)*ratio(c) < qMin*qMin {
				return false, 0
			}
		}
	}
	lv := &r.lv[k]
	remZ := 0.0
	d := r.d
	// A walk that reaches MaxT before the density's share falls has not
	// seen the conditional's mass (a line far out in a funnel's neck,
	// whose spike the rule does not resolve): what its flags say is
	// judged by the density's share it held (see raise).
	unresolved := atMax && !zSmall
	raise := func(f int, share float64) { r.raise(lv, f, share, cur[0], unresolved) }
	for c := range cur {
		if cur[c] <= 0 {
			// The density vanished (zero, or undefined where the model
			// loses precision) before its share was negligible: the tail
			// beyond is unknown; count the last share as its size.
			if !first && prev[c] > r.s.Tol*peak[c] {
				gc := r.watchIndex(k, c)
				lv.rem[gc] += prev[c]
				if c == 0 {
					remZ = prev[c]
				}
			}
			continue
		}
		q := ratio(c)
		tol := r.momentTol(c)
		if c == 0 {
			tol = r.s.Tol
		}
		small := cur[c] <= tol*peak[c] && !math.IsInf(cur[c], 1)
		if math.IsInf(cur[c], 1) || math.IsNaN(cur[c]) {
			q = math.Inf(1) // overflowed: growing without bound
		}
		gc := r.watchIndex(k, c)
		if q < qMin {
			rem := cur[c] * q / (1 - q)
			lv.rem[gc] += rem
			if c == 0 {
				remZ = rem
			}
			continue
		}
		if small {
			continue
		}
		// The share does not decay: the integral is infinite.
		if c == 0 {
			raise(0, cur[0])
			continue
		}
		a := k + (c-1)/4
		switch (c - 1) % 4 {
		case 0:
			raise(flagIndex(d, 0, 1, a), cur[c])
		case 1:
			raise(flagIndex(d, 0, 3, a), cur[c])
		case 2:
			raise(flagIndex(d, 1, 1, a), cur[c])
		default:
			raise(flagIndex(d, 1, 3, a), cur[c])
		}
	}
	// Odd moments: |y| and |y|^3 lie between the even powers (Lyapunov's
	// inequality), so their share decays at the mean of the neighbours'
	// rates.
	for a := k; a < d; a++ {
		b := 1 + 4*(a-k)
		for sc := 0; sc < 2; sc++ {
			lo, mid, hi := 0, b+2*sc, b+2*sc+1 // 1, y^2, y^4 (or x~^2, x~^4)
			g1 := math.Sqrt(cur[lo] * cur[mid])
			if q2 := ratio(lo) * ratio(mid); q2 >= qMin*qMin && g1 > r.s.MomentTol*math.Sqrt(peak[lo]*peak[mid]) {
				raise(flagIndex(d, sc, 0, a), g1)
			} else if q2 < qMin*qMin && g1 > 0 {
				q := math.Sqrt(q2)
				w := r.lay.wY1(a)
				if sc == 1 {
					w = r.lay.wX1(a)
				}
				lv.rem[w] += g1 * q / (1 - q)
			}
			// |y|^3's share is below the geometric mean of y^2's and
			// y^4's, and so is its end: the geometric mean of their
			// tolerances (with MomentTol alone, a walk whose fourth power
			// ended at its own looser tolerance flagged the third moment
			// infinite: a two-component mixture's means, under normal
			// priors).
			tol3 := math.Sqrt(r.momentTol(mid) * r.momentTol(hi))
			if g3 := math.Sqrt(cur[mid] * cur[hi]); ratio(mid)*ratio(hi) >= qMin*qMin && g3 > tol3*math.Sqrt(peak[mid]*peak[hi]) {
				raise(flagIndex(d, sc, 2, a), g3)
			}
		}
	}
	return true, remZ
}

// momentTol is the end of a walk for local component c (c >= 1): MomentTol
// for the second powers, fourthPowerTol for the fourth, whose shares decay
// the slowest (a Student t with nu degrees of freedom: at rate nu - 4 in t)
// and which serve only the kurtosis; the geometric remainder added at the
// end of the walk carries the rest of their tail.
func (r *rule) momentTol(c int) float64 {
	if (c-1)%2 == 1 {
		return max(r.s.MomentTol, fourthPowerTol)
	}
	return r.s.MomentTol
}

// fourthPowerTol is the share below which a fourth power's walk may end.
// Where the tail is algebraic, |u|^-a, the share in t is c e^(-(a-5)t)
// (1 + O(|u|^-2)) with u ~ e^t, so the geometric remainder is exact to that
// order already a few units of t in; at 1e-10 a Student t with 4.9 degrees
// of freedom walked 13 units of t on each inner axis, more nodes than a
// 4-D rule may use.
const fourthPowerTol = 1e-2

// watchIndex returns the global watch index of local component c of a
// walk along axis k.
func (r *rule) watchIndex(k, c int) int {
	if c == 0 {
		return 0
	}
	a := k + (c-1)/4
	switch (c - 1) % 4 {
	case 0:
		return r.lay.wY2(a)
	case 1:
		return r.lay.wY4(a)
	case 2:
		return r.lay.wX2(a)
	}
	return r.lay.wX4(a)
}

// raise sets infinite flag f of level lv, whose walk ended holding the
// share per unit t share of the flagged component and zShare of the
// density, and records them in the units of the outermost level's sums
// (clearStrayFlags): the component's share where the walk's density had
// decayed, the density's where the walk was unresolved (it reached MaxT
// with the density's share still high: its last moment shares, at the
// far end of a line that never found the mass, say nothing of the
// moment's tail).
func (r *rule) raise(lv *level, f int, share, zShare float64, unresolved bool) {
	lv.inf[f] = true
	scale := special.Exp(lv.logW - r.ldL)
	r.infShare[f] = max(r.infShare[f], share*scale)
	if unresolved {
		r.unresolvedZ[f] = max(r.unresolvedZ[f], zShare*scale)
	} else {
		r.resolvedShare[f] = max(r.resolvedShare[f], share*scale)
	}
}

// clearStrayFlags clears the infinite flags of the outermost level whose
// walks held less than strayTail of the component's whole sum where they
// ended (a line far out whose conditional the rule resolves no better than
// a spike: the 4-D Student-t regression with its scale on [0, inf] had a
// walk that did not decay holding 1e-24 of the density's sum, and its
// slope's mean and variance were flagged infinite under a normal prior).
// Such a walk is no evidence of an infinite integral; nor is a walk that
// reached MaxT before the density's share fell (it never found the
// conditional's mass), judged by the density's share it held (below
// unresolvedTail of the density's sum): the inner
// walks far in a hierarchical model's neck (two group means under a
// shared sd on [0, inf]) flagged a group mean's fourth moment infinite
// holding 1e-13 of the density's sum. What such walks leave
// beyond MaxT is counted in the remainders as another MaxT of its last
// share.
func (r *rule) clearStrayFlags() {
	lv := &r.lv[0]
	d := r.d
	tot := make([]float64, r.lay.nWatch)
	r.lay.watchFromFull(lv.sum[0], tot)
	maxT := r.s.withDefaults().MaxT
	for f, on := range lv.inf {
		if !on {
			continue
		}
		var total float64
		w := -1 // the remainder the tail beyond MaxT goes to
		if f == 0 {
			total, w = tot[0], 0
		} else {
			i := f - 1
			sc, m, a := i/(4*d), (i/d)%4, i%d
			y2, y4, y1 := r.lay.wY2(a), r.lay.wY4(a), r.lay.wY1(a)
			if sc == 1 {
				y2, y4, y1 = r.lay.wX2(a), r.lay.wX4(a), r.lay.wX1(a)
			}
			switch m {
			case 0:
				total, w = math.Sqrt(tot[0]*tot[y2]), y1
			case 1:
				total, w = tot[y2], y2
			case 2:
				total = math.Sqrt(tot[y2] * tot[y4])
			default:
				total, w = tot[y4], y4
			}
		}
		if !(r.resolvedShare[f] < strayTail*total && r.unresolvedZ[f] < unresolvedTail*tot[0]) {
			continue
		}
		lv.inf[f] = false
		if w >= 0 {
			lv.rem[w] += r.infShare[f] * maxT
		}
	}
}

// flagIndex returns the index of the flag "the moment of order m+1 of axis
// a on scale sc (0 unconstrained, 1 original) is infinite"; flag 0 is "the
// density's integral is infinite".
func flagIndex(d, sc, m, a int) int { return 1 + sc*4*d + m*d + a }

// recordOthers adds the remainders of the powers of the fixed axes a < k,
// which are the density's remainder remZ times the powers of their offsets.
func (r *rule) recordOthers(k int, remZ float64) {
	if remZ == 0 {
		return
	}
	lv := &r.lv[k]
	for a := 0; a < k; a++ {
		y, x := r.y[a], r.x[a]
		lv.rem[r.lay.wY2(a)] += remZ * y * y
		lv.rem[r.lay.wY4(a)] += remZ * y * y * y * y
		lv.rem[r.lay.wX2(a)] += remZ * x * x
		lv.rem[r.lay.wX4(a)] += remZ * x * x * x * x
		lv.rem[r.lay.wY1(a)] += remZ * math.Abs(y)
		lv.rem[r.lay.wX1(a)] += remZ * math.Abs(x)
	}
}

// fixedOffsets writes r.y and r.x for the axes a < k of the current point.
func (r *rule) fixedOffsets(k int) {
	d := r.d
	for a := 0; a < k; a++ {
		s := r.m[a]
		for b := 0; b <= a; b++ {
			s += r.L[a*d+b] * r.u[b]
		}
		r.y[a] = s - r.m[a]
		r.x[a] = r.maps[a].ToOriginal(s) - r.xm[a]
	}
}
