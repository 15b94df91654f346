package quadrature

import (
	"context"
	"fmt"
	"math"

	"bellcheck/engine/special"
)

// CurveAcross walks parameter k's marginal of a 2-D density as Curve does,
// but integrates the other parameter at each node by the trapezoid rule
// over [lo, hi] (on its unconstrained scale) at n points, where Curve
// runs a slice's rule out from a centre. A conditional with two peaks and
// a valley between them where the density underflows (the banana's x given
// y far out: x = +-sqrt(20 (5 - y)), 1e-700 of the peaks at x = 0) defeats
// a walk from the centre, not a lattice across a range that holds the
// mass, such as the scouting grid's box. The walk's step halves (twice at
// most) while its mass at h and at 2h disagree by more than curveMassTol;
// ErrCurve where the mass stays off 1 by more than that.
func (res *Result) CurveAcross(ctx context.Context, k int, lo, hi float64, n int) (*Curve, error) {
	if res.Improper {
		return nil, ErrImproper
	}
	if res.Dim != 2 || k < 0 || k > 1 {
		return nil, fmt.Errorf("quadrature: CurveAcross takes one of the two parameters of a 2-D density, not %d of %d", k+1, res.Dim)
	}
	if !(hi > lo) || math.IsInf(lo, 0) || math.IsInf(hi, 0) || n < 3 {
		return nil, fmt.Errorf("quadrature: CurveAcross over [%g, %g] at %d points", lo, hi, n)
	}
	other := 1 - k
	cols := [][]float64{make([]float64, n), make([]float64, n)}
	step := (hi - lo) / float64(n-1)
	for i := range cols[other] {
		cols[other][i] = lo + float64(i)*step
	}
	out := make([]float64, n)
	p := res.p.Clone()
	// log of the integral over the other coordinate at z_k, by the
	// trapezoid rule (log-sum-exp: the shares far out underflow).
	across := func(zk float64) float64 {
		for i := range cols[k] {
			cols[k][i] = zk
		}
		p.LogDensityBlock(cols, out)
		top := math.Inf(-1)
		for _, v := range out {
			if v > top && !math.IsInf(v, 1) {
				top = v
			}
		}
		if math.IsInf(top, -1) || math.IsNaN(top) {
			return math.Inf(-1)
		}
		sum := 0.0
		for i, v := range out {
			if math.IsNaN(v) || math.IsInf(v, 1) {
				continue
			}
			d := v - top
			if d < -40 {
				continue // below 5e-18 of the largest share: rounding
			}
			w := 1.0
			if i == 0 || i == n-1 {
				w = 0.5
			}
			sum += w * special.Exp(d)
		}
		return top + math.Log(sum*step)
	}
	s := res.settings.withDefaults()
	h := s.Step
	var cv *Curve
	// The last walk's log-densities by node: at half the step its nodes
	// are every second one of the new walk's.
	var prevLogs map[int]float64
	for halvings := 0; ; halvings++ {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		cv = &Curve{lv: res.marginalMap(k), c: res.centre[k], h: h, mp: res.mapOf(k)}
		logs := map[int]float64{}
		err := cv.walk(int(s.MaxT/h), func(j int, z float64, _ bool) (float64, error) {
			lz, ok := prevLogs[j/2]
			if j%2 != 0 || !ok {
				lz = across(z) - res.LogZ
			}
			logs[j] = lz
			return lz, nil
		})
		prevLogs = logs
		if err != nil {
			return nil, err
		}
		coarse := 0.0
		for i, v := range cv.g {
			if (cv.lo+i)%2 == 0 {
				coarse += 2 * h * v
			}
		}
		massOK := len(cv.g) >= minCurveNodes && math.Abs(cv.total-1) <= curveMassTol
		if massOK && cv.quantilesSettled() {
			return cv, nil
		}
		if halvings >= 2 || (!massOK && !(math.Abs(coarse-cv.total) > curveMassTol)) {
			break
		}
		h /= 2
	}
	return nil, fmt.Errorf("%w: parameter %d's marginal across [%g, %g] at %d points over %d nodes holds %g of the mass", ErrCurve, k+1, lo, hi, n, len(cv.g), cv.total)
}

// acrossQuantileTol bounds the error estimate of CurveAcross's quantiles,
// in the marginal's spread ((q97.5 - q2.5) / 3.92, its sd for a normal):
// as the reference cases' quantiles, to 1e-4 of an sd.
const acrossQuantileTol = 1e-4

// quantilesSettled reports whether the curve's 2.5, 50 and 97.5 %
// quantiles at its step h, 2h and 4h (every second and fourth node)
// converge to within acrossQuantileTol of its spread (the estimate of
// estimateAt: e2^2/e1 where the differences shrink). The walk's mass can
// be right to 1e-6 while its sinc interpolation misplaces a far quantile:
// the banana's y, whose 2.5 % quantile at h = 1/16 was 1.2e-3 off (1.6e-4
// of its sd), at 1/32 2e-6, against E_x Phi(q - 5 + 0.05 x^2) by the
// trapezoid rule in x.
func (cv *Curve) quantilesSettled() bool {
	probs := []float64{0.025, 0.5, 0.975}
	c2 := cv.coarser()
	if c2 == nil {
		return false
	}
	c4 := c2.coarser()
	if c4 == nil {
		return false
	}
	q1, q2, q4 := cv.Quantiles(probs), c2.Quantiles(probs), c4.Quantiles(probs)
	spread := (q1[2] - q1[0]) / 3.92
	if !(spread > 0) || math.IsInf(spread, 0) {
		return false
	}
	for i := range probs {
		if !(estimateAt([3]float64{q1[i], q2[i], q4[i]}) <= acrossQuantileTol*spread) {
			return false
		}
	}
	return true
}

// coarser returns the curve at twice its step: its nodes at even t/h,
// their mass their sum times 2h; nil where that leaves too few.
func (cv *Curve) coarser() *Curve {
	first := cv.lo
	if first%2 != 0 {
		first++
	}
	out := &Curve{lv: cv.lv, c: cv.c, h: 2 * cv.h, lo: first / 2, mp: cv.mp}
	for j := first; j-cv.lo < len(cv.g); j += 2 {
		v := cv.g[j-cv.lo]
		out.g = append(out.g, v)
		out.total += out.h * v
	}
	if len(out.g) < minCurveNodes/2 {
		return nil
	}
	return out
}
