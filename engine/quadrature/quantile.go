package quadrature

import (
	"context"
	"math"
)

// Quantiles returns the quantiles of parameter k at the probabilities
// probs on the original scale (a monotone map keeps them), and the mass of
// the marginal found (near 1: a check of the slices against LogZ), from
// the marginal's Curve with slices at the rule's own step.
func (res *Result) Quantiles(ctx context.Context, k int, probs []float64) ([]float64, float64, error) {
	cv, err := res.Curve(ctx, k, true)
	if err != nil {
		return nil, 0, err
	}
	return cv.Quantiles(probs), cv.Mass(), nil
}

// marginalMap returns the node map of parameter k's marginal: centred at
// the main rule's centre, the sides chosen by probing log p along k (the
// others on their Gaussian regression line) as the rule's axes are.
func (res *Result) marginalMap(k int) nodeMap {
	d := res.Dim
	s := res.settings.withDefaults()
	sd := math.Sqrt(res.cov[k*d+k])
	lv := nodeMap{w: s.Width * sd, width: s.Width, betaL: 0.5, betaR: 0.5}
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
