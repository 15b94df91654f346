package grid

import (
	"context"
	"math"

	"bellcheck/engine/special"
	"bellcheck/engine/transform"
)

// Stats summarises the density on the grid. Fitting holds the moments in
// the grid's own coordinates z, Original those of x(z) (the same numbers
// when no maps are given), both from the same nodes and weights.
type Stats struct {
	// LogZ is log of the integral of p over the box; LogZErr the change
	// from the half-resolution rule.
	LogZ, LogZErr float64
	// ExpectedLogP is E_p[log p] with log p as evaluated (unnormalised);
	// ExpectedLogP - LogZ is minus the entropy of the normalised density.
	ExpectedLogP float64
	Fitting      Moments
	Original     Moments
	// EdgeMass[k][0] and EdgeMass[k][1] are the shares of the mass in the
	// outermost layer of nodes at the lower and upper face of axis k.
	EdgeMass [][2]float64
	// NonFinite is the fraction of nodes where log p is NaN or +Inf.
	NonFinite float64
	// TailMass estimates the share of the mass beyond the free faces: at
	// each, the marginal density there divided by its logarithmic decay
	// rate (exact for an exponential tail), the tail taken no longer than
	// the box is wide where the marginal does not decay.
	TailMass float64
	// Marginals holds each axis's marginal on the fitting scale (the
	// pairs' come from PairMarginals).
	Marginals []Marginal
	// pairSums are the unnormalised pair sums (by pair of axes) and
	// pairWeights the axes' weights, from which PairMarginals builds the
	// pairs' marginals when asked: only the grid's plots need them, and
	// two arrays of the grid's size per pair were most of an analysis's
	// allocations where the rule was the reference.
	pairSums    map[[2]int][]float64
	pairWeights [][]float64
	pairTotal   float64
	// OrigArgMax is the node where the density on the original scale (p
	// divided by the Jacobian) is highest; ArgMax of the grid when no maps.
	OrigArgMax int
}

// Moments of the normalised density on one scale.
type Moments struct {
	Mean, MeanErr []float64
	Cov, CovErr   [][]float64
	SD            []float64
	Corr          [][]float64
	// Quantiles holds the 2.5 %, 50 % and 97.5 % quantiles of each marginal.
	Quantiles [][3]float64
	// Skewness and ExcessKurtosis of each marginal.
	Skewness, ExcessKurtosis []float64
	// TailShare measures how much each marginal's mean and variance still
	// move with the box: the largest of |change of the variance| / variance
	// and |change of the mean| / sd when the outer quarter of the way from
	// the median to each free face is dropped.
	TailShare []float64
	// AbsTailShare is the relative change of the mean absolute deviation
	// from the median under the same trimming: it keeps moving where the
	// mean itself does not exist (a Cauchy density on a symmetric box).
	AbsTailShare []float64
	// KurtosisTailShare is the relative change of the fourth central
	// moment under the same trimming: large where the kurtosis does not
	// exist.
	KurtosisTailShare []float64
}

// Marginal is the marginal of one axis on the fitting scale: Density at the
// nodes (normalised so that the quadrature of it is 1) and Mass, the share
// of the total at each node (Density times the weight).
type Marginal struct {
	Axis    int
	Density []float64
	Mass    []float64
}

// Pair is the marginal of axes I < J on the fitting scale, as Density and
// Mass at node (i, j) in element i*N[J]+j.
type Pair struct {
	I, J    int
	Density []float64
	Mass    []float64
}

// reduction accumulates masses by one rule (full or half resolution).
type reduction struct {
	w     [][]float64 // per-axis weights
	step  int         // 1 for the full rule, 2 for the half one
	n     []int       // reduced length of each axis
	marg  [][]float64 // marginal masses (filled in finish)
	pairs map[[2]int][]float64
	total float64
	elogp float64
}

func newReduction(g *Grid, w [][]float64, step int) *reduction {
	r := &reduction{w: w, step: step, pairs: map[[2]int][]float64{}}
	for k := 0; k < g.Dim; k++ {
		r.n = append(r.n, (g.N[k]-1)/step+1)
	}
	for k := 0; k < g.Dim; k++ {
		for l := k + 1; l < g.Dim; l++ {
			ps := takeFloats(r.n[k] * r.n[l])
			clear(ps)
			r.pairs[[2]int{k, l}] = ps
		}
	}
	if g.Dim == 1 {
		r.marg = [][]float64{make([]float64, r.n[0])}
	}
	return r
}

// addLine adds the line of nodes with outer indices ix[:d-1], whose
// exponentiated values are e (e[j] = exp(logp - Max), 0 where excluded)
// and shifted log values lp.
func (r *reduction) addLine(ix []int, e, lp []float64) {
	d := len(r.n)
	wo := 1.0
	for k := 0; k < d-1; k++ {
		if ix[k]%r.step != 0 {
			return
		}
		wo *= r.w[k][ix[k]]
	}
	wl := r.w[d-1]
	step := r.step
	sum, elp := 0.0, 0.0
	var rows [4][]float64
	for k := 0; k < d-1; k++ {
		p := r.pairs[[2]int{k, d - 1}]
		i := ix[k] / step
		rows[k] = p[i*r.n[d-1] : (i+1)*r.n[d-1]]
	}
	for j := 0; j < len(e); j += step {
		if e[j] == 0 {
			continue
		}
		m := wo * wl[j] * e[j]
		sum += m
		elp += m * lp[j]
		jj := j / step
		for k := 0; k < d-1; k++ {
			rows[k][jj] += m
		}
		if d == 1 {
			r.marg[0][jj] += m
		}
	}
	r.total += sum
	r.elogp += elp
	for k := 0; k < d-1; k++ {
		for l := k + 1; l < d-1; l++ {
			r.pairs[[2]int{k, l}][(ix[k]/step)*r.n[l]+ix[l]/step] += sum
		}
	}
}

// finish derives the marginal masses from the pair masses.
func (r *reduction) finish() {
	d := len(r.n)
	if d == 1 {
		return
	}
	r.marg = make([][]float64, d)
	for k := 0; k < d; k++ {
		m := make([]float64, r.n[k])
		if k < d-1 {
			p := r.pairs[[2]int{k, d - 1}]
			nl := r.n[d-1]
			for i := range m {
				s := 0.0
				for _, v := range p[i*nl : (i+1)*nl] {
					s += v
				}
				m[i] = s
			}
		} else {
			p := r.pairs[[2]int{0, d - 1}]
			for i := 0; i < r.n[0]; i++ {
				for j, v := range p[i*r.n[d-1] : (i+1)*r.n[d-1]] {
					m[j] += v
				}
			}
		}
		r.marg[k] = m
	}
}

// moments returns the mean and covariance of the coordinates coords[k][i]
// (already reduced to the rule's nodes) under the normalised masses.
func (r *reduction) moments(coords [][]float64) (mean []float64, cov [][]float64) {
	d := len(r.n)
	mean = make([]float64, d)
	cov = make([][]float64, d)
	for k := 0; k < d; k++ {
		s := 0.0
		for i, m := range r.marg[k] {
			s += m * coords[k][i]
		}
		mean[k] = s / r.total
		cov[k] = make([]float64, d)
	}
	for k := 0; k < d; k++ {
		s := 0.0
		for i, m := range r.marg[k] {
			dv := coords[k][i] - mean[k]
			s += m * dv * dv
		}
		cov[k][k] = s / r.total
		for l := k + 1; l < d; l++ {
			p := r.pairs[[2]int{k, l}]
			nl := r.n[l]
			s := 0.0
			for i := 0; i < r.n[k]; i++ {
				di := coords[k][i] - mean[k]
				row := p[i*nl : (i+1)*nl]
				t := 0.0
				for j, v := range row {
					t += v * (coords[l][j] - mean[l])
				}
				s += di * t
			}
			cov[k][l] = s / r.total
			cov[l][k] = cov[k][l]
		}
	}
	return mean, cov
}

// summarise computes Stats from LogP.
func (g *Grid) summarise(ctx context.Context, free [][2]bool, progress func(float64)) error {
	d := g.Dim
	full := newReduction(g, g.Weights, 1)
	half := newReduction(g, g.HalfWeights, 2)
	if err := g.reduce(ctx, progress, full, half); err != nil {
		return err
	}
	st := &g.Stats
	st.LogZ = g.Max + math.Log(full.total)
	st.LogZErr = math.Abs(math.Log(full.total) - math.Log(half.total))
	st.ExpectedLogP = g.Max + full.elogp/full.total
	st.NonFinite = float64(g.NonFinite) / float64(len(g.LogP))

	// Coordinates on both scales, for the full and half rules.
	zFull, zHalf := make([][]float64, d), make([][]float64, d)
	xFull, xHalf := make([][]float64, d), make([][]float64, d)
	for k := 0; k < d; k++ {
		zFull[k] = g.Nodes[k]
		xFull[k] = make([]float64, g.N[k])
		for i, z := range g.Nodes[k] {
			xFull[k][i] = g.Maps[k].ToOriginal(z)
		}
		for i := 0; i < g.N[k]; i += 2 {
			zHalf[k] = append(zHalf[k], zFull[k][i])
			xHalf[k] = append(xHalf[k], xFull[k][i])
		}
	}
	g.fillMoments(&st.Fitting, full, half, zFull, zHalf, free, nil)
	if allIdentity(g.Maps) {
		st.Original = st.Fitting.clone()
	} else {
		g.fillMoments(&st.Original, full, half, xFull, xHalf, free, g.Maps)
	}

	st.EdgeMass = make([][2]float64, d)
	for k := 0; k < d; k++ {
		m := full.marg[k]
		st.EdgeMass[k] = [2]float64{m[0] / full.total, m[len(m)-1] / full.total}
	}
	st.Marginals = g.marginals(full)
	st.TailMass = 0
	for k := 0; k < d; k++ {
		dens := st.Marginals[k].Density
		fr := [2]bool{true, true}
		if k < len(free) {
			fr = free[k]
		}
		n, h := g.N[k], g.Spacing(k)
		for side := 0; side < 2; side++ {
			face := 0
			if side == 1 {
				face = n - 1
			}
			if !fr[side] || dens[face] == 0 {
				continue
			}
			// The decay rate of log density inwards, by least squares over
			// the outer 5 % of the nodes (at least four), with the tail
			// length capped at the box's width.
			m := max(4, n/20)
			var su, sv, suu, suv, cnt float64
			for i := 0; i < m; i++ {
				j := i
				if side == 1 {
					j = n - 1 - i
				}
				if dens[j] <= 0 {
					continue
				}
				u := float64(i) * h
				v := math.Log(dens[j])
				su, sv, suu, suv, cnt = su+u, sv+v, suu+u*u, suv+u*v, cnt+1
			}
			decay := 0.0
			if den := cnt*suu - su*su; cnt >= 2 && den > 0 {
				decay = (cnt*suv - su*sv) / den
			}
			width := g.Box.Hi[k] - g.Box.Lo[k]
			st.TailMass += dens[face] / max(decay, 1/width)
		}
	}
	st.pairSums, st.pairWeights, st.pairTotal = full.pairs, g.Weights, full.total
	for _, ps := range half.pairs { // read by the moments above only
		releaseFloats(ps)
	}
	st.OrigArgMax = g.ArgMax
	if !allIdentity(g.Maps) {
		st.OrigArgMax = g.origArgMax()
	}
	progress(1)
	return nil
}

// PairMarginals returns each pair's marginal on the fitting scale (i < j,
// in the order (0,1), (0,2), ..., (1,2), ...), built from the grid's sums.
func (st *Stats) PairMarginals() []Pair {
	var out []Pair
	d := len(st.pairWeights)
	for k := 0; k < d; k++ {
		for l := k + 1; l < d; l++ {
			p := st.pairSums[[2]int{k, l}]
			mass := make([]float64, len(p))
			dens := make([]float64, len(p))
			nl := len(st.pairWeights[l])
			invL := make([]float64, nl)
			for j, w := range st.pairWeights[l] {
				invL[j] = 1 / w
			}
			invT := 1 / st.pairTotal
			for i, wi := range st.pairWeights[k] {
				invI := 1 / wi
				row := i * nl
				for j, il := range invL {
					m := p[row+j] * invT
					mass[row+j] = m
					dens[row+j] = m * invI * il
				}
			}
			out = append(out, Pair{I: k, J: l, Density: dens, Mass: mass})
		}
	}
	return out
}

func allIdentity(maps []transform.Map) bool {
	for _, m := range maps {
		if !m.Scale.IsIdentity() {
			return false
		}
	}
	return true
}

// origArgMax returns the node where log p - sum_k log J_k is highest.
func (g *Grid) origArgMax() int {
	d := g.Dim
	logJ := make([][]float64, d)
	for k := 0; k < d; k++ {
		logJ[k] = make([]float64, g.N[k])
		for i, z := range g.Nodes[k] {
			logJ[k][i] = g.Maps[k].LogJacobian(z)
		}
	}
	ix := make([]int, d)
	best, arg := math.Inf(-1), g.ArgMax
	nLast := g.N[d-1]
	for line := 0; line < len(g.LogP)/nLast; line++ {
		g.Index(line*nLast, ix)
		outer := 0.0
		for k := 0; k < d-1; k++ {
			outer += logJ[k][ix[k]]
		}
		for j, v := range g.LogP[line*nLast : (line+1)*nLast] {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				continue
			}
			if s := v - outer - logJ[d-1][j]; s > best {
				best, arg = s, line*nLast+j
			}
		}
	}
	return arg
}

// fillMoments fills one scale's moments. maps, when non-nil, maps the
// fitting-scale quantiles to this scale.
func (g *Grid) fillMoments(m *Moments, full, half *reduction, cFull, cHalf [][]float64, free [][2]bool, maps []transform.Map) {
	d := g.Dim
	m.Mean, m.Cov = full.moments(cFull)
	hMean, hCov := half.moments(cHalf)
	m.MeanErr = make([]float64, d)
	m.CovErr = make([][]float64, d)
	m.SD = make([]float64, d)
	m.Corr = make([][]float64, d)
	for k := 0; k < d; k++ {
		m.MeanErr[k] = math.Abs(m.Mean[k] - hMean[k])
		m.CovErr[k] = make([]float64, d)
		for l := 0; l < d; l++ {
			m.CovErr[k][l] = math.Abs(m.Cov[k][l] - hCov[k][l])
		}
		m.SD[k] = math.Sqrt(m.Cov[k][k])
	}
	for k := 0; k < d; k++ {
		m.Corr[k] = make([]float64, d)
		for l := 0; l < d; l++ {
			m.Corr[k][l] = m.Cov[k][l] / (m.SD[k] * m.SD[l])
		}
		m.Corr[k][k] = 1
	}
	m.Quantiles = make([][3]float64, d)
	m.Skewness = make([]float64, d)
	m.ExcessKurtosis = make([]float64, d)
	m.TailShare = make([]float64, d)
	m.AbsTailShare = make([]float64, d)
	m.KurtosisTailShare = make([]float64, d)
	for k := 0; k < d; k++ {
		dens := make([]float64, g.N[k])
		for i, v := range full.marg[k] {
			dens[i] = v / g.Weights[k][i]
		}
		h := g.Spacing(k)
		pieces := cubicPieces(h, dens)
		for q, prob := range [3]float64{0.025, 0.5, 0.975} {
			z := quantileFromPieces(g.Nodes[k][0], h, dens, pieces, prob)
			if maps != nil {
				z = maps[k].ToOriginal(z)
			}
			m.Quantiles[k][q] = z
		}
		mass := full.marg[k]
		c := cFull[k]
		var m2, m3, m4 float64
		for i, w := range mass {
			dv := c[i] - m.Mean[k]
			d2 := dv * dv
			m2 += w * d2
			m3 += w * d2 * dv
			m4 += w * d2 * d2
		}
		m2 /= full.total
		m3 /= full.total
		m4 /= full.total
		m.Skewness[k] = m3 / math.Pow(m2, 1.5)
		m.ExcessKurtosis[k] = m4/(m2*m2) - 3
		fr := [2]bool{true, true}
		if k < len(free) {
			fr = free[k]
		}
		m.TailShare[k], m.AbsTailShare[k], m.KurtosisTailShare[k] = tailShare(mass, c, fr)
	}
}

// tailShare drops the outer quarter of the way from the median node to each
// free face and measures how much the mean and variance move (the first
// result), how much the mean absolute deviation from the median does, and
// how much the fourth central moment does (relative changes).
func tailShare(mass, c []float64, free [2]bool) (moments, absDev, fourth float64) {
	const bulkShare = 1e-3
	n := len(mass)
	total := 0.0
	for _, v := range mass {
		total += v
	}
	med, acc := 0, 0.0
	for i, v := range mass {
		acc += v
		if acc >= total/2 {
			med = i
			break
		}
	}
	// The trimmed region never reaches into the bulk: it starts beyond the
	// outermost nodes holding at least bulkShare of the largest node's mass
	// on each side, so a box that is tight around several modes, or around
	// one far from the median, is not mistaken for one whose tails matter.
	peak := 0.0
	for _, v := range mass {
		peak = max(peak, v)
	}
	first, last := 0, n-1
	for first < n-1 && !(mass[first] >= bulkShare*peak) {
		first++
	}
	for last > 0 && !(mass[last] >= bulkShare*peak) {
		last--
	}
	lo, hi := 0, n-1
	if free[0] {
		lo = min(med/4, first)
	}
	if free[1] {
		hi = max(n-1-(n-1-med)/4, last)
	}
	stats := func(a, b int) (mean, variance, mad, m4 float64) {
		s, s1, sa := 0.0, 0.0, 0.0
		for i := a; i <= b; i++ {
			s += mass[i]
			s1 += mass[i] * c[i]
			sa += mass[i] * math.Abs(c[i]-c[med])
		}
		mean = s1 / s
		s2, s4 := 0.0, 0.0
		for i := a; i <= b; i++ {
			dv := c[i] - mean
			s2 += mass[i] * dv * dv
			s4 += mass[i] * dv * dv * dv * dv
		}
		return mean, s2 / s, sa / s, s4 / s
	}
	m0, v0, a0, q0 := stats(0, n-1)
	m1, v1, a1, q1 := stats(lo, hi)
	if !(v0 > 0) || !(a0 > 0) {
		return 0, 0, 0
	}
	return max(math.Abs(v0-v1)/v0, math.Abs(m0-m1)/math.Sqrt(v0)), math.Abs(a0-a1) / a0, math.Abs(q0-q1) / q0
}

func (m Moments) clone() Moments {
	c := Moments{
		Mean: append([]float64(nil), m.Mean...), MeanErr: append([]float64(nil), m.MeanErr...),
		SD: append([]float64(nil), m.SD...), Quantiles: append([][3]float64(nil), m.Quantiles...),
		Skewness: append([]float64(nil), m.Skewness...), ExcessKurtosis: append([]float64(nil), m.ExcessKurtosis...),
		TailShare: append([]float64(nil), m.TailShare...), AbsTailShare: append([]float64(nil), m.AbsTailShare...),
		KurtosisTailShare: append([]float64(nil), m.KurtosisTailShare...),
	}
	for _, r := range [][2]*[][]float64{{&c.Cov, &m.Cov}, {&c.CovErr, &m.CovErr}, {&c.Corr, &m.Corr}} {
		for _, row := range *r[1] {
			*r[0] = append(*r[0], append([]float64(nil), row...))
		}
	}
	return c
}

// reduce adds every line of nodes along the last axis to the reductions,
// and derives their marginals.
func (g *Grid) reduce(ctx context.Context, progress func(float64), reds ...*reduction) error {
	d := g.Dim
	nLast := g.N[d-1]
	e := make([]float64, nLast)
	lp := make([]float64, nLast)
	ix := make([]int, d)
	nLines := len(g.LogP) / nLast
	checkEvery := max(1, 1024/nLast)
	for line := 0; line < nLines; line++ {
		if line%checkEvery == 0 {
			if err := ctx.Err(); err != nil {
				return err
			}
			progress(float64(line) / float64(nLines))
		}
		g.Index(line*nLast, ix)
		vals := g.LogP[line*nLast : (line+1)*nLast]
		for j, v := range vals {
			s := v - g.Max
			if !(s <= 0 && s > -745) {
				// NaN, +Inf (above the finite maximum), -Inf and values
				// that underflow carry no mass.
				e[j], lp[j] = 0, 0
				continue
			}
			e[j] = special.Exp(s)
			lp[j] = s
		}
		for _, r := range reds {
			r.addLine(ix, e, lp)
		}
	}
	for _, r := range reds {
		r.finish()
	}
	return nil
}

// summariseMarginals is summarise for a grid whose marginals alone are
// read (Settings.marginalsOnly): the Stats hold LogZ, ExpectedLogP,
// NonFinite and Marginals; the rest is left zero (LogZErr NaN).
func (g *Grid) summariseMarginals(ctx context.Context, _ [][2]bool, progress func(float64)) error {
	full := newReduction(g, g.Weights, 1)
	if err := g.reduce(ctx, progress, full); err != nil {
		return err
	}
	st := &g.Stats
	st.LogZ = g.Max + math.Log(full.total)
	st.LogZErr = math.NaN()
	st.ExpectedLogP = g.Max + full.elogp/full.total
	st.NonFinite = float64(g.NonFinite) / float64(len(g.LogP))
	st.Marginals = g.marginals(full)
	st.pairSums = full.pairs // released with the grid
	progress(1)
	return nil
}

// marginals returns each axis's normalised marginal from a reduction of
// the full rule.
func (g *Grid) marginals(full *reduction) []Marginal {
	out := make([]Marginal, g.Dim)
	for k := range out {
		mass := make([]float64, g.N[k])
		dens := make([]float64, g.N[k])
		for i, m := range full.marg[k] {
			mass[i] = m / full.total
			dens[i] = mass[i] / g.Weights[k][i]
		}
		out[k] = Marginal{Axis: k, Density: dens, Mass: mass}
	}
	return out
}
