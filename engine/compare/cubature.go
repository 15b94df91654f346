package compare

import (
	"context"
	"fmt"
	"math"
	"time"

	"bellcheck/engine/hermite"
	"bellcheck/engine/target"
)

// cubature returns KL(q||p) and the Hellinger distance by a tensor
// Gauss-Hermite rule in q's coordinates z = m + sqrt(2) L u, with p
// normalised by the grid's log Z; both are NaN where log p is NaN or +Inf
// at a node.
func cubature(ctx context.Context, p target.Density, gp *gaussianPrep, logZ float64, order int, progress func(float64)) (kl, hel float64, err error) {
	d := len(gp.Mean)
	if order <= 0 {
		order = [...]int{64, 24, 12, 8}[min(d, 4)-1]
	}
	u, wu := hermite.Rule(order) // shared: read only
	if u == nil {
		return math.NaN(), math.NaN(), fmt.Errorf("compare: cubature order %d out of range", order)
	}
	L := gp.Lower()
	n := 1
	for k := 0; k < d; k++ {
		n *= order
	}
	cols := make([][]float64, d)
	for k := range cols {
		cols[k] = make([]float64, n)
	}
	wts := make([]float64, n)
	lqs := make([]float64, n)
	idx := make([]int, d)
	norm := math.Pow(math.Pi, -float64(d)/2)
	for i := 0; i < n; i++ {
		rem := i
		w := norm
		m2 := 0.0
		for k := d - 1; k >= 0; k-- {
			idx[k] = rem % order
			rem /= order
			w *= wu[idx[k]]
			m2 += 2 * u[idx[k]] * u[idx[k]]
		}
		for k := 0; k < d; k++ {
			s := gp.Mean[k]
			for l := 0; l <= k; l++ {
				s += L[k*d+l] * math.Sqrt2 * u[idx[l]]
			}
			cols[k][i] = s
		}
		wts[i] = w
		lqs[i] = gp.LogNorm() - m2/2
	}
	out := make([]float64, n)
	// In blocks, so that progress reports keep coming and cancellation
	// is seen: 16 points first, then as many as the last block's time says
	// fit in 4 ms (up to 512; the density may be costly).
	const maxBlock = 512
	const aim = 4 * time.Millisecond
	block := 16
	part := make([][]float64, d)
	for i0, i1 := 0, 0; i0 < n; i0 = i1 {
		i1 = min(i0+block, n)
		for k := range part {
			part[k] = cols[k][i0:i1]
		}
		t0 := time.Now()
		p.LogDensityBlock(part, out[i0:i1])
		block = maxBlock
		if el := time.Since(t0); el > 0 {
			block = int(min(max(1, float64(i1-i0)*float64(aim)/float64(el)), maxBlock))
		}
		if progress != nil {
			progress(1)
		}
		if ctx != nil {
			if err := ctx.Err(); err != nil {
				return 0, 0, err
			}
		}
	}
	eLogP, bhat := 0.0, 0.0
	for i, v := range out {
		switch {
		case math.IsInf(v, -1):
			return math.Inf(1), hellingerOnly(out, wts, lqs, logZ), nil
		case math.IsNaN(v) || math.IsInf(v, 1):
			// Undefined where q has mass: so are both numbers.
			return math.NaN(), math.NaN(), nil
		}
		eLogP += wts[i] * (v - logZ)
		bhat += wts[i] * math.Exp((v-logZ-lqs[i])/2)
	}
	kl = max(0, -gp.Entropy()-eLogP)
	return kl, math.Sqrt(max(0, 1-bhat)), nil
}

func hellingerOnly(out, wts, lqs []float64, logZ float64) float64 {
	bhat := 0.0
	for i, v := range out {
		if !math.IsInf(v, -1) && !math.IsNaN(v) {
			bhat += wts[i] * math.Exp((v-logZ-lqs[i])/2)
		}
	}
	return math.Sqrt(max(0, 1-bhat))
}
