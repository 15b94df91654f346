package compare

import (
	"context"
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"bellcheck/engine/gauss"
	"bellcheck/engine/grid"
	"bellcheck/engine/special"
	"bellcheck/engine/target"
)

// Method says how KL(q||p) and the Hellinger distance were computed.
type Method string

const (
	// OnGrid: by the grid's quadrature (q lies inside the box and the grid
	// resolves it).
	OnGrid Method = "grid"
	// Cubature: by a Gauss-Hermite cubature adapted to q, with log p
	// evaluated afresh and normalised by the grid's log Z, because q has
	// mass outside the box or is too narrow for the grid.
	Cubature Method = "cubature"
	// BoundedSupport: KL(q||p) is +Inf because the support is bounded; the
	// Hellinger distance is from the grid.
	BoundedSupport Method = "bounded_support"
)

// Result is the comparison of one Gaussian with the exact density.
type Result struct {
	KLqp      float64 // KL(q||p); +Inf where q has mass where p is zero
	KLpq      float64 // KL(p||q)
	Hellinger float64 // sqrt(1 - integral of sqrt(p q)), in [0, 1]
	// MeanErrSD is (mean of q - exact mean) / exact sd, per axis.
	MeanErrSD []float64
	// SDRatio is sd of q / exact sd, per axis.
	SDRatio []float64
	// Coverage95 is the exact mass inside q's central 95 % region
	// {(z - m)' Cov^-1 (z - m) <= chi-square_d quantile 0.95}.
	Coverage95 float64
	// QMass is the grid's quadrature of q: 1 up to the rule's error when q
	// lies inside the box and the grid resolves it.
	QMass float64
	// Resolved reports that the grid's spacing is fine enough for q: the
	// rule integrates q to about 1e-10 (see latticeMin).
	Resolved bool
	// CoverageInBall reports a q the nodes do not resolve whose coverage
	// came from a product rule over its region instead (CompareNodes,
	// ballCoverage): Coverage95 stands though Resolved is false.
	CoverageInBall bool
	// Method tells how KLqp and Hellinger were computed.
	Method Method
}

// Settings of Compare. The zero value means the defaults.
type Settings struct {
	// Bounded reports that the support is bounded along some axis on the
	// grid's scale, so that every Gaussian puts mass where p is zero.
	Bounded bool
	// Density is p itself, for the cubature used when q is not resolved on
	// the grid; without it the grid's values are used regardless.
	Density target.Density
	// QMassTol is the largest |QMass - 1| for which the grid's values are
	// used; 0 means 1e-6.
	QMassTol float64
	// Order is the number of Gauss-Hermite nodes per axis of the cubature;
	// 0 means 64, 24, 12 and 8 for one to four parameters.
	Order int
	// Context, when set, is checked every few thousand nodes; Compare
	// returns its error when cancelled.
	Context context.Context
	// Progress, when set, receives the fraction of the grid done.
	Progress func(fraction float64)
}

// ErrBadGaussian means a Gaussian whose dimension is not the grid's.
var ErrBadGaussian = errors.New("compare: bad Gaussian")

// gaussianPrep holds what the per-node loop needs of one Gaussian beyond
// its prepared form.
type gaussianPrep struct {
	*gauss.Prepared
	r0   float64 // sqrt of the chi-square 0.95 quantile
	band float64 // half-width of the smoothing band in sqrt(M)
	step float64 // largest change of sqrt(M) between neighbours
	trPC float64 // sum_k P_kk h_k^2 / 12, the cell's mean of u'Pu
	// resolved: the grid's rule integrates q to about 1e-10 (see
	// latticeMin).
	resolved bool
	// accumulators
	qmass, klqp, bhat, cover float64
	infinite                 bool
}

func prepare(g *grid.Grid, q *gauss.Prepared) (*gaussianPrep, error) {
	d := g.Dim
	if q == nil || q.Dim() != d {
		return nil, fmt.Errorf("%w: dimension does not match the grid's %d", ErrBadGaussian, d)
	}
	gp := &gaussianPrep{Prepared: q}
	prec := q.Precision()
	gp.r0 = math.Sqrt(special.ChiSquareQuantile(d, 0.95))
	s := 0.0
	for k := 0; k < d; k++ {
		h := g.Spacing(k)
		s += h * h * prec[k][k]
	}
	gp.band = math.Sqrt(float64(d)*s) / 2
	gp.trPC = s / 12
	for k := 0; k < d; k++ {
		gp.step = max(gp.step, g.Spacing(k)*math.Sqrt(prec[k][k]))
	}
	gp.resolved = latticeMin(g, q.Cov) >= resolvedMin
	return gp, nil
}

// Compare compares each Gaussian in qs with the density on g, in one pass
// over the grid. The mean and spread errors are relative to the grid's
// fitting-scale moments.
//
// KL(p||q) = E_p[log p/Z] - E_p[log q] follows in closed form from the
// grid's entropy, mean and covariance. KL(q||p), the Hellinger distance and
// the coverage are quadratures over the nodes; the coverage smooths the
// region's indicator across the cells its boundary cuts (the share of the
// cell on the inner side of the linearised boundary) and removes the bias
// of that smoothing to second order (see shareWithCurvature). Where q has more than QMassTol of its mass outside
// the box, KL(q||p) comes from a Gauss-Hermite cubature in q's coordinates
// instead, and where q is too narrow for the grid's spacing so does the
// Hellinger distance (see Method).
func Compare(g *grid.Grid, qs []*gauss.Prepared, s Settings) ([]Result, error) {
	d := g.Dim
	preps := make([]*gaussianPrep, len(qs))
	for i, q := range qs {
		gp, err := prepare(g, q)
		if err != nil {
			return nil, fmt.Errorf("gaussian %d: %w", i, err)
		}
		preps[i] = gp
	}
	logZ := g.Stats.LogZ
	nLast := g.N[d-1]
	zl := g.Nodes[d-1]
	wl := g.Weights[d-1]
	ix := make([]int, d)
	r := make([]float64, d)
	h := make([]float64, d)
	for k := range h {
		h[k] = g.Spacing(k)
	}
	lpl := make([]float64, nLast)
	pl := make([]float64, nLast)
	spl := make([]float64, nLast)
	hl := g.Spacing(d - 1)
	swl := make([]float64, nLast)
	for j, v := range wl {
		swl[j] = math.Sqrt(v)
	}
	quads := make([][3]float64, len(preps))
	spans := make([][2]int, len(preps))
	rs := make([][4]float64, len(preps))
	nLines := len(g.LogP) / nLast
	checkEvery := max(1, 1024/nLast)
	for line := 0; line < nLines; line++ {
		if line%checkEvery == 0 {
			if s.Context != nil {
				if err := s.Context.Err(); err != nil {
					return nil, err
				}
			}
			if s.Progress != nil {
				s.Progress(float64(line) / float64(nLines))
			}
		}
		g.Index(line*nLast, ix)
		wo := 1.0
		for k := 0; k < d-1; k++ {
			wo *= g.Weights[k][ix[k]]
		}
		vals := g.LogP[line*nLast : (line+1)*nLast]
		// Per fit, the quadratic M(j) = A + B t + C t^2 in t = z_last - m_last
		// and the nodes [j1, j2] where M < qNegligible.
		jlo, jhi := nLast, -1
		for fi, gp := range preps {
			P := gp.Precision()
			A, B := 0.0, 0.0
			for k := 0; k < d-1; k++ {
				r[k] = g.Nodes[k][ix[k]] - gp.Mean[k]
			}
			for k := 0; k < d-1; k++ {
				A += P[k][k] * r[k] * r[k]
				for l := k + 1; l < d-1; l++ {
					A += 2 * P[k][l] * r[k] * r[l]
				}
				B += 2 * P[k][d-1] * r[k]
			}
			C := P[d-1][d-1]
			copy(rs[fi][:d-1], r[:d-1])
			quads[fi] = [3]float64{A, B, C}
			// (Coverage needs M below hi2, also inside qNegligible unless
			// the grid is much coarser than q.)
			thr := max(qNegligible, sq(gp.r0+gp.band+gp.step))
			j1, j2 := quadInterval(A-thr, B, C, zl[0]-gp.Mean[d-1], hl, nLast)
			spans[fi] = [2]int{j1, j2}
			if j1 <= j2 {
				jlo, jhi = min(jlo, j1), max(jhi, j2)
			}
		}
		// Where p = 0 and q is not negligible, KL(q||p) is infinite (q
		// underflows only beyond M = 2 (logNorm + 745)).
		for j, v := range vals {
			if !math.IsInf(v, -1) {
				continue
			}
			for fi, gp := range preps {
				if gp.infinite {
					continue
				}
				q := quads[fi]
				t := zl[j] - gp.Mean[d-1]
				if M := q[0] + t*(q[1]+q[2]*t); gp.LogNorm()-M/2 > -745 {
					gp.infinite = true
				}
			}
		}
		if jlo > jhi {
			continue
		}
		// Per node: the normalised log p, the weighted p and sqrt(p),
		// shared by the fits.
		for j := jlo; j <= jhi; j++ {
			v := vals[j]
			lp := v - logZ
			lpl[j] = lp
			switch {
			case math.IsNaN(v) || math.IsInf(v, 0):
				lpl[j] = math.NaN()
				pl[j], spl[j] = 0, 0
			case lp < -700:
				pl[j], spl[j] = 0, 0
			default:
				pl[j] = wo * wl[j] * math.Exp(lp)
				spl[j] = math.Sqrt(pl[j])
			}
		}
		for fi, gp := range preps {
			j1, j2 := spans[fi][0], spans[fi][1]
			if j1 > j2 {
				continue
			}
			P := gp.Precision()
			copy(r[:d-1], rs[fi][:d-1])
			A, B, C := quads[fi][0], quads[fi][1], quads[fi][2]
			ml := gp.Mean[d-1]
			lo2, hi2 := sq(max(gp.r0-gp.band-gp.step, 0)), sq(gp.r0+gp.band+gp.step)
			// sqrt(q) = exp(lq/2) along the line by the recurrence for the
			// exponential of a quadratic: two products a node instead of an
			// exponential (relative rounding about 1e-16 a step).
			t1 := zl[j1] - ml
			sqq := math.Exp((gp.LogNorm() - (A+t1*(B+C*t1))/2) / 2)
			ratio := math.Exp(-(B*hl + C*(2*t1*hl+hl*hl)) / 4)
			ratio2 := math.Exp(-C * hl * hl / 2)
			swo := math.Sqrt(wo)
			for j := j1; j <= j2; j, sqq, ratio = j+1, sqq*ratio, ratio*ratio2 {
				lp := lpl[j]
				if math.IsNaN(lp) {
					continue
				}
				t := zl[j] - ml
				M := A + t*(B+C*t)
				if M < qNegligible {
					lq := gp.LogNorm() - M/2
					w := wo * wl[j]
					q := sqq * sqq
					gp.qmass += w * q
					gp.klqp += w * q * (lq - lp)
					gp.bhat += swo * swl[j] * sqq * spl[j]
				}
				pm := pl[j]
				if pm == 0 || M >= hi2 {
					continue
				}
				if M <= lo2 {
					gp.cover += pm
					continue
				}
				r[d-1] = t
				chi, corr := shareWithCurvature(h, P, r, M, gp.r0, gp.trPC)
				gp.cover += pm * (chi - corr)
			}
		}
	}
	// The curvature correction of a cell's share can be negative where p is
	// not smooth on the scale of the grid: a share of the mass stays in
	// [0, 1] all the same.
	out := make([]Result, len(qs))
	tol := s.QMassTol
	if tol <= 0 {
		tol = 1e-6
	}
	for i, gp := range preps {
		res := Result{QMass: gp.qmass, Resolved: gp.resolved, Coverage95: max(0, min(gp.cover, 1)), Method: OnGrid}
		res.KLpq = klpq(g, gp)
		res.KLqp = gp.klqp
		res.Hellinger = math.Sqrt(max(0, 1-gp.bhat))
		if gp.infinite {
			res.KLqp = math.Inf(1)
		}
		if (!gp.resolved || math.Abs(gp.qmass-1) > tol) && s.Density != nil {
			kl, hel, err := cubature(s.Context, s.Density, gp, logZ, s.Order, s.Progress)
			if err != nil {
				return nil, fmt.Errorf("gaussian %d: %w", i, err)
			}
			res.Method = Cubature
			res.KLqp = kl
			if !gp.resolved {
				// Where q is resolved, sqrt(p q) is: the grid keeps the
				// Hellinger distance even when q leaves the box, since p
				// has no mass there.
				res.Hellinger = hel
			}
		}
		if s.Bounded {
			res.KLqp = math.Inf(1)
			res.Method = BoundedSupport
		}
		res.MeanErrSD = make([]float64, d)
		res.SDRatio = make([]float64, d)
		for k := 0; k < d; k++ {
			sd := g.Stats.Fitting.SD[k]
			res.MeanErrSD[k] = (qs[i].Mean[k] - g.Stats.Fitting.Mean[k]) / sd
			res.SDRatio[k] = math.Sqrt(qs[i].Cov.At(k, k)) / sd
		}
		out[i] = res
	}
	return out, nil
}

func sq(x float64) float64 { return x * x }

// resolvedMin is the least value of latticeMin for which the grid resolves
// a Gaussian: the rule's relative error on it is then about
// 2 exp(-2 pi^2 1.2) = 1e-10.
const resolvedMin = 1.2

// latticeMin returns min n' S n over integer vectors n != 0 with entries in
// -3..3, with S_kl = Cov_kl / (h_k h_l). By Poisson's summation formula the
// trapezoid rule's relative error on a Gaussian of covariance Cov is the
// sum over such n of exp(-2 pi^2 n' S n), so the smallest term decides: for
// a correlated Gaussian it can be far smaller than the axes' conditional
// variances suggest, or far larger.
func latticeMin(g *grid.Grid, cov *mat.SymDense) float64 {
	d := g.Dim
	var s [4][4]float64
	for k := 0; k < d; k++ {
		for l := 0; l < d; l++ {
			s[k][l] = cov.At(k, l) / (g.Spacing(k) * g.Spacing(l))
		}
	}
	best := math.Inf(1)
	var n [4]int
	total := 1
	for k := 0; k < d; k++ {
		total *= 7
	}
	for idx := 0; idx < total; idx++ {
		rem, zero := idx, true
		for k := 0; k < d; k++ {
			n[k] = rem%7 - 3
			rem /= 7
			if n[k] != 0 {
				zero = false
			}
		}
		if zero {
			continue
		}
		v := 0.0
		for k := 0; k < d; k++ {
			for l := 0; l < d; l++ {
				v += float64(n[k]*n[l]) * s[k][l]
			}
		}
		best = min(best, v)
	}
	return best
}

// quadInterval returns the nodes j in [0, n) with a + b t + c t^2 < 0 for
// t = t0 + j h (c > 0), as j1 <= j2, or j1 > j2 when there are none.
func quadInterval(a, b, c, t0, h float64, n int) (j1, j2 int) {
	disc := b*b - 4*c*a
	if !(disc > 0) || !(c > 0) {
		return n, -1
	}
	sd := math.Sqrt(disc)
	tm, tp := (-b-sd)/(2*c), (-b+sd)/(2*c)
	lo := math.Ceil((tm - t0) / h)
	hi := math.Floor((tp - t0) / h)
	if hi < 0 || lo > float64(n-1) {
		return n, -1
	}
	return int(max(lo, 0)), int(min(hi, float64(n-1)))
}

// qNegligible is the Mahalanobis square beyond which q's density is below
// e^-30 of its peak and its terms in KL(q||p), the Hellinger integral and
// q's mass are dropped: q holds less than 1e-11 of its mass there in up to
// four dimensions (chi-square tail), and p = 0 there still makes KL(q||p)
// infinite.
const qNegligible = 60

// cellShare returns the share of the cell around a node (Mahalanobis
// square M, gradient G = 2 P r of M there, r the offset from q's mean)
// inside the region M(z) <= r0^2. Along the normal n = G/|G| of the
// region's boundary, a point u uniform in the cell has s = n.u distributed
// as a sum of independent uniforms of widths |n_k| h_k, whose distribution
// function is the volume of a box under a hyperplane, in closed form. M is
// quadratic: M(z + u) = M + G.u + u'Pu; the tangential part of u'Pu is
// replaced by its mean over the cell (this accounts for the boundary's
// curvature across the cell) and the normal part s^2 n'Pn kept, so the
// share is F(s*) with s* the root of the resulting quadratic in s (exact
// in one dimension).
func cellShare(h []float64, P [][]float64, G []float64, M, r0, trPC, trP float64) float64 {
	d := len(h)
	norm := 0.0
	for k := 0; k < d; k++ {
		norm += G[k] * G[k]
	}
	norm = math.Sqrt(norm)
	if norm == 0 {
		if M+trPC <= r0*r0 {
			return 1
		}
		return 0
	}
	var n, widths [4]float64
	wmax, varS, W := 0.0, 0.0, 0.0
	for k := 0; k < d; k++ {
		n[k] = G[k] / norm
		widths[k] = math.Abs(n[k]) * h[k]
		wmax = max(wmax, widths[k])
		varS += widths[k] * widths[k] / 12
		W += widths[k]
	}
	// Cheap bounds first (0 <= n'Pn <= trace P bounds the quadratic term):
	// most cells near the boundary still lie wholly on one side.
	gap := r0*r0 - M
	if gap-trPC >= norm*W/2+trP*W*W/4 {
		return 1
	}
	if gap-trPC+trP*varS < -norm*W/2 {
		return 0
	}
	nPn := 0.0
	for k := 0; k < d; k++ {
		for l := 0; l < d; l++ {
			nPn += n[k] * P[k][l] * n[l]
		}
	}
	// s + a s^2 <= b over s in [-W/2, W/2].
	qa := nPn / norm
	qb := (r0*r0 - M - (trPC - nPn*varS)) / norm
	if W/2+qa*W*W/4 <= qb {
		return 1 // the whole cell is inside
	}
	if -W/2 > qb {
		return 0 // the whole cell is outside
	}
	disc := 1 + 4*qa*qb
	if disc < 0 {
		return 0
	}
	sStar := 2 * qb / (1 + math.Sqrt(disc))
	// Drop widths too small to matter (and to divide by).
	var a [4]float64
	m := 0
	for k := 0; k < d; k++ {
		if widths[k] > 1e-6*wmax {
			a[m] = widths[k]
			m++
		}
	}
	F, _ := uniformSumCDF(a[:m], sStar)
	return F
}

// shareWithCurvature returns the smoothed indicator at a node, chi, and
// sum_k (chi(+h_k) - 2 chi + chi(-h_k)) / 24, the node's part of the
// correction below.
//
// Summing p times the cell-averaged indicator integrates p convolved with
// the cell (a box kernel of variance h_k^2/12 per axis) over the region,
// which is the region's mass plus sum_k h_k^2/24 times the integral of
// d2p/dz_k2 over it, to second order; by parts, that integral is the sum of
// p times the second difference of chi, which vanishes away from the
// boundary. Subtracting it removes the second-order bias (a Gaussian
// density falling across the boundary would otherwise be under-covered).
func shareWithCurvature(h []float64, P [][]float64, r []float64, M, r0, trPC float64) (chi, corr float64) {
	d := len(h)
	var G, Gn [4]float64
	for k := 0; k < d; k++ {
		gk := 0.0
		for l := 0; l < d; l++ {
			gk += P[k][l] * r[l]
		}
		G[k] = 2 * gk
	}
	trP := 0.0
	for k := 0; k < d; k++ {
		trP += P[k][k]
	}
	chi = cellShare(h, P, G[:d], M, r0, trPC, trP)
	for k := 0; k < d; k++ {
		hk := h[k]
		sum := -2 * chi
		for _, sg := range [2]float64{1, -1} {
			// The neighbour: M and its gradient moved by one step.
			Mn := M + sg*hk*G[k] + hk*hk*P[k][k]
			for l := 0; l < d; l++ {
				Gn[l] = G[l] + sg*2*hk*P[l][k]
			}
			sum += cellShare(h, P, Gn[:d], max(Mn, 0), r0, trPC, trP)
		}
		corr += sum / 24
	}
	return chi, corr
}

// uniformSumCDF returns F(s) = P(S <= s) and G(s) = integral of F up to s
// for S the sum of independent uniforms on [-a_k/2, a_k/2]: with s measured
// from the lower end, F(s) = sum over subsets T of (-1)^|T| (s - sum_T a)_+^n
// / (n! prod a), and G the same with the power n+1 and (n+1)! (the volume
// of a box under a hyperplane, by inclusion-exclusion).
func uniformSumCDF(a []float64, s float64) (F, G float64) {
	n := len(a)
	total, prod := 0.0, 1.0
	for _, v := range a {
		total += v
		prod *= v
	}
	t := s + total/2
	if t <= 0 {
		return 0, 0
	}
	if t >= total {
		return 1, t - total/2
	}
	fact := 1.0
	for i := 2; i <= n; i++ {
		fact *= float64(i)
	}
	for mask := 0; mask < 1<<n; mask++ {
		u := t
		sign := 1.0
		for k := 0; k < n; k++ {
			if mask&(1<<k) != 0 {
				u -= a[k]
				sign = -sign
			}
		}
		if u <= 0 {
			continue
		}
		pn := 1.0
		for i := 0; i < n; i++ {
			pn *= u
		}
		F += sign * pn
		G += sign * pn * u
	}
	F /= fact * prod
	G /= fact * float64(n+1) * prod
	return F, G
}

// klpq returns KL(p||q) = E_p[log p/Z] - E_p[log q] from the grid's entropy
// and moments.
func klpq(g *grid.Grid, gp *gaussianPrep) float64 {
	d := g.Dim
	st := &g.Stats
	mu := st.Fitting.Mean
	C := st.Fitting.Cov
	P := gp.Precision()
	tr, quadForm := 0.0, 0.0
	for k := 0; k < d; k++ {
		for l := 0; l < d; l++ {
			tr += P[k][l] * C[l][k]
			quadForm += (mu[k] - gp.Mean[k]) * P[k][l] * (mu[l] - gp.Mean[l])
		}
	}
	eLogQ := gp.LogNorm() - 0.5*(tr+quadForm)
	eLogP := st.ExpectedLogP - st.LogZ
	return max(0, eLogP-eLogQ)
}
