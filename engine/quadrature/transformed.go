package quadrature

import (
	"math"

	"bellcheck/engine/special"
)

// MomentsOf returns the moments of y = f(z) (len(y) = Dim) over the node
// set: means, covariances, skewness and excess kurtosis, with error
// estimates from the rules of steps 2h and 4h, whose nodes are subsets of
// the set (see the package documentation). The infinite flags are not set:
// a moment that is infinite comes out finite but unreliable, so the caller
// takes the flags from the scale whose tails it knows (Unconstrained or
// Original).
func (res *Result) MomentsOf(f func(z, y []float64)) Moments {
	d := res.Dim
	n := res.Nodes
	// Sums per tier: weight, y, y y', y^3, y^4 (centred at the first node
	// of highest weight for accuracy).
	type sums struct {
		s0         float64
		s1, s3, s4 []float64
		s2         []float64
	}
	var tiers [3]sums
	for t := range tiers {
		tiers[t] = sums{s1: make([]float64, d), s3: make([]float64, d), s4: make([]float64, d), s2: make([]float64, d*d)}
	}
	z := make([]float64, d)
	y := make([]float64, d)
	ref := make([]float64, d)
	top := math.Inf(-1)
	for i := 0; i < n.Len(); i++ {
		if v := n.logW[i] + n.logP[i]; v > top {
			top = v
			n.Point(i, z)
			f(z, ref)
		}
	}
	for i := 0; i < n.Len(); i++ {
		w := special.Exp(n.logW[i] + n.logP[i] - top)
		if w == 0 {
			continue
		}
		n.Point(i, z)
		f(z, y)
		for k := range y {
			y[k] -= ref[k]
		}
		for t := 0; t <= int(n.tier[i]); t++ {
			wt := w * math.Pow(float64(int(1)<<t), float64(d))
			s := &tiers[t]
			s.s0 += wt
			for a := 0; a < d; a++ {
				ya := y[a]
				s.s1[a] += wt * ya
				s.s3[a] += wt * ya * ya * ya
				s.s4[a] += wt * ya * ya * ya * ya
				for b := 0; b < d; b++ {
					s.s2[a*d+b] += wt * ya * y[b]
				}
			}
		}
	}
	var st [3]stats
	for t := range tiers {
		st[t] = newStats(d)
		s := &tiers[t]
		for a := 0; a < d; a++ {
			st[t].mean[a] = ref[a] + s.s1[a]/s.s0
		}
		for a := 0; a < d; a++ {
			mua := s.s1[a] / s.s0
			for b := 0; b < d; b++ {
				st[t].cov[a*d+b] = s.s2[a*d+b]/s.s0 - mua*s.s1[b]/s.s0
			}
			m2, m3, m4 := s.s2[a*d+a]/s.s0, s.s3[a]/s.s0, s.s4[a]/s.s0
			c2 := m2 - mua*mua
			c3 := m3 - 3*mua*m2 + 2*mua*mua*mua
			c4 := m4 - 4*mua*m3 + 6*mua*mua*m2 - 3*mua*mua*mua*mua
			st[t].skew[a] = c3 / math.Pow(c2, 1.5)
			st[t].kurt[a] = c4/(c2*c2) - 3
		}
	}
	mo := Moments{
		Mean: st[0].mean, MeanErr: make([]float64, d), Cov: st[0].cov, CovErr: make([]float64, d*d),
		Skewness: st[0].skew, SkewnessErr: make([]float64, d), ExcessKurtosis: st[0].kurt, KurtosisErr: make([]float64, d),
		MeanInfinite: make([]bool, d), VarInfinite: make([]bool, d), SkewnessInfinite: make([]bool, d), KurtosisInfinite: make([]bool, d),
	}
	for a := 0; a < d; a++ {
		sd := math.Sqrt(math.Abs(st[0].cov[a*d+a]))
		mo.MeanErr[a] = estimate(st[0].mean[a], st[1].mean[a], st[2].mean[a], sd, 0) + roundoff*(sd+math.Abs(st[0].mean[a]))
		mo.SkewnessErr[a] = estimate(st[0].skew[a], st[1].skew[a], st[2].skew[a], 1, 0) + roundoff
		mo.KurtosisErr[a] = estimate(st[0].kurt[a], st[1].kurt[a], st[2].kurt[a], 1, 0) + roundoff
		for b := 0; b < d; b++ {
			sc := math.Sqrt(math.Abs(st[0].cov[a*d+a] * st[0].cov[b*d+b]))
			mo.CovErr[a*d+b] = estimate(st[0].cov[a*d+b], st[1].cov[a*d+b], st[2].cov[a*d+b], sc, 0) + roundoff*sc
		}
	}
	return mo
}
