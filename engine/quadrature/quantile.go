package quadrature

import (
	"context"
	"fmt"
	"math"
)

// Quantiles returns the quantiles of parameter k at the probabilities
// probs on the original scale (a monotone map keeps them), and the mass of
// the marginal found (near 1: a check of the slices against LogZ).
//
// The marginal of z_k is evaluated at the nodes z = c + w phi(t), t = jh
// (c and w from the pilot or the mode, phi chosen per side as in the rule;
// each node a nested rule over the other parameters), walking out until it is negligible. Its distribution
// function at the nodes is the integral of the sinc interpolant of the
// nodes' values (the interpolant whose integral the trapezoid rule is, so
// it converges as fast: Stenger, "Numerical methods based on sinc and
// analytic functions", 1993, section 3.2): C(t_k) = h sum_i g_i (1/2 +
// Si(pi (k - i))/pi). It is inverted on the cubic Hermite interpolant of
// the sinc interpolant's C and g at eight steps between nodes.
func (res *Result) Quantiles(ctx context.Context, k int, probs []float64) ([]float64, float64, error) {
	if res.Improper {
		return nil, 0, ErrImproper
	}
	if k < 0 || k >= res.Dim {
		return nil, 0, fmt.Errorf("quadrature: parameter %d of %d", k+1, res.Dim)
	}
	s := res.settings.withDefaults()
	h := s.Step
	c := res.centre[k]
	lv := res.marginalMap(k)
	sl := newSlice(res.p.Clone(), []int{k})
	maxJ := int(s.MaxT / h)
	// g[j+maxJ] is the marginal's share per unit t at t = jh.
	g := make([]float64, 2*maxJ+1)
	lo, hi := 0, 0
	peak := 0.0
	for _, side := range [2]int{1, -1} {
		var guess []float64
		j := 0
		if side < 0 {
			j = -1
		}
		for ; j >= -maxJ && j <= maxJ; j += side {
			t := float64(j) * h
			sl.val[0] = c + lv.offset(t)
			lz, cen, err := res.sliceLogZ(ctx, sl, guess, true)
			if err != nil {
				return nil, 0, err
			}
			guess = cen
			v := math.Exp(lz-res.LogZ) * lv.jac(t)
			if math.IsNaN(v) {
				v = 0
			}
			g[j+maxJ] = v
			peak = math.Max(peak, v)
			lo, hi = min(lo, j), max(hi, j)
			if j != 0 && v <= 1e-12*peak && v <= g[j-side+maxJ] {
				break
			}
		}
	}
	n := hi - lo + 1
	gg := g[lo+maxJ : hi+1+maxJ]
	cdf := make([]float64, n)
	total := 0.0
	for i := range gg {
		total += h * gg[i]
		_, cdf[i] = sincAt(gg, h, i, 0)
	}
	mp := res.mapOf(k)
	out := make([]float64, len(probs))
	var sv, sc [siSub + 1]float64
	for pi, p := range probs {
		target := p * total
		i := 0
		for i < n-2 && cdf[i+1] < target {
			i++
		}
		// The interpolant's values and integral at siSub steps within
		// [t_i, t_i+1], then bisection on the cubic Hermite interpolant of
		// the sub-step where the target is crossed.
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
		t := (float64(lo+i) + (float64(f)+(a+b)/2)/siSub) * h
		out[pi] = mp.ToOriginal(c + lv.offset(t))
	}
	return out, total, nil
}

// marginalMap returns the node map of parameter k's marginal: centred at
// the main rule's centre, the sides chosen by probing log p along k (the
// others on their Gaussian regression line) as the rule's axes are.
func (res *Result) marginalMap(k int) level {
	d := res.Dim
	s := res.settings.withDefaults()
	sd := math.Sqrt(res.cov[k*d+k])
	lv := level{w: s.Width * sd, width: s.Width, betaL: 0.5, betaR: 0.5}
	x := make([]float64, d)
	at := func(dist float64) float64 {
		for a := 0; a < d; a++ {
			x[a] = res.centre[a] + res.cov[a*d+k]/res.cov[k*d+k]*dist
		}
		return res.p.LogDensity(x)
	}
	f0 := at(0)
	if math.IsNaN(f0) || math.IsInf(f0, 0) {
		return lv
	}
	for _, side := range [2]float64{1, -1} {
		d1 := f0 - at(side*probeR*sd)
		if !(d1 > 0) {
			continue
		}
		d2 := f0 - at(side*2*probeR*sd)
		if math.IsNaN(d2) || d2 > probeRatio*d1 {
			if side > 0 {
				lv.betaR = 0
			} else {
				lv.betaL = 0
			}
		}
	}
	if lv.betaL == 0 && lv.betaR == 0 {
		lv.w, lv.width = linearWidth*sd, linearWidth
	}
	return lv
}
