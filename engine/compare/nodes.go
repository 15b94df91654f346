package compare

import (
	"context"
	"fmt"
	"math"
	"runtime"
	"sync"
	"sync/atomic"

	"bellcheck/engine/gauss"
	"bellcheck/engine/special"
	"bellcheck/engine/target"
)

// OnNodes: KL(p||q), the Hellinger distance and the coverage are weighted
// sums over the exact reference's node set; KL(q||p) comes from the
// cubature in q's coordinates (CompareNodes).
const OnNodes Method = "nodes"

// NodeSet is a weighted set of points where the exact density was
// evaluated: the integral of f against p is about
// sum_i exp(LogWeight(i) + LogP(i)) f(z_i) (quadrature.NodeSet).
type NodeSet interface {
	Len() int
	Point(i int, z []float64)
	LogWeight(i int) float64
	LogP(i int) float64
	// Coarse reports whether node i is also a node of the rule of twice
	// the step (whose weights are 2^d times the finest's).
	Coarse(i int) bool
}

// NodeSettings are the inputs of CompareNodes beside the nodes and the
// Gaussians.
type NodeSettings struct {
	// LogZ is log of the integral of p (the rule's own estimate): it
	// normalises p in the cubature. The sums over the nodes use the node
	// set's own total, so that p's weights sum to one.
	LogZ float64
	// ToFitting maps a node z to the fitting scale, y, and returns
	// log |det dy/dz| there; nil means the nodes are on the fitting scale.
	ToFitting func(z, y []float64) float64
	// Mean and SD are the exact moments on the fitting scale (for the mean
	// errors and sd ratios).
	Mean, SD []float64
	// Density is p on the fitting scale, for the cubature of KL(q||p)
	// (and of the Hellinger distance where q is not inside the node set).
	Density target.Density
	// Bounded, Order, QMassTol, Context and Progress are as in Settings.
	Bounded  bool
	Order    int
	QMassTol float64
	Context  context.Context
	Progress func(fraction float64)
}

// coverageWidths are the smoothing widths of the coverage's indicator, in
// local node spacings (see CompareNodes).
var coverageWidths = [2]float64{0.5, 1}

// CompareNodes compares each Gaussian in qs (on the fitting scale) with the
// density integrated by a node set on its own scale z.
//
// With y(z) the fitting scale and J = |det dy/dz|, p's density on the
// fitting scale is p_z/J, so that, with weights m_i = w_i p_i / sum w p:
//   - KL(p||q) = sum_i m_i (log p_i - log Zn - log J_i - log q(y_i));
//   - the Bhattacharyya coefficient is integral sqrt(p_y q) dy =
//     sum_i w_i sqrt(p_i q(y_i) J_i / Zn), Hellinger = sqrt(1 - it);
//   - the Bhattacharyya sum is also taken over the rule of twice the
//     step (the coarse nodes, weights 2^d w_i). The trapezoid rule's error
//     on an analytic integrand falls like exp(-c/h), so halving the step
//     squares it: the change r between the two sums estimates the coarse
//     rule's error, and r^2 the finest's. Where r^2 exceeds QMassTol (and
//     p's own change), the Hellinger distance comes from the cubature in
//     q's coordinates. Where the node nearest q's mean is more
//     than one of q's sds wide (the side of its cell's volume in q's
//     coordinates), or the coverage (below) changes by more than
//     coverageTol between the two rules, the nodes do not resolve q:
//     Resolved is false, the coverage is not to be used and the Hellinger
//     distance comes from the cubature too. A q wider
//     than p needs no such care: sqrt(p q) decays with p. (The banana's
//     Laplace fit: r = 0.9 %: its Hellinger distance from the cubature,
//     its coverage from the nodes; the funnel's Laplace fit, narrow in x
//     where the nodes of the funnel's mouth are wide: no coverage, which
//     the nodes put at 0.308 against 0.302 by a 1-D quadrature);
//   - QMass is q's mass on the nodes, sum_i w_i q(y_i) J_i (below 1 where q
//     reaches beyond p's nodes);
//   - the coverage is sum_i m_i chi_i, with chi the indicator of q's
//     central 95 % region smoothed across each node's cell (below); where
//     the nodes do not resolve q, a product rule over that region in q's
//     coordinates (ballCoverage) gives it if two such rules agree within
//     ballCoverTol (CoverageInBall);
//   - KL(q||p) always comes from the cubature (the nodes follow p, not q).
//
// Zn = sum_i w_i p_i is the node set's own total.
//
// The coverage is p's mass inside q's central 95 % region
// {M(y) <= r0^2}, M the Mahalanobis square of q. A sum of p's weights over
// the nodes inside would be only first-order accurate in the spacing (the
// region's boundary cuts the cells), so the indicator is smoothed along
// the radius s = sqrt(M): chi_i = Phi((r0 - s_i) / delta_i), with delta_i
// a multiple c of node i's spacing in q's coordinates (the d-th root of its
// cell's volume there, exp(log w_i + log J_i) / sqrt(det Cov)). A Gaussian
// smoothing one spacing wide is integrated by the trapezoid rule to about
// exp(-2 pi^2 c^2) of its size (Poisson summation), and its bias grows as
// c^2, so the smoothing's bias is removed by Richardson extrapolation from
// widths c and 2c (coverageWidths): (4 C(c) - C(2c)) / 3. Beyond seven
// widths from the boundary the indicator is taken as 0 or 1 (smoothReach).
func CompareNodes(ns NodeSet, qs []*gauss.Prepared, s NodeSettings) ([]Result, error) {
	n := ns.Len()
	if len(qs) == 0 {
		return nil, nil
	}
	d := qs[0].Dim()
	for i, q := range qs {
		if q == nil || q.Dim() != d {
			return nil, fmt.Errorf("gaussian %d: %w: dimensions differ", i, ErrBadGaussian)
		}
	}
	if n == 0 {
		return nil, fmt.Errorf("compare: empty node set")
	}
	// Per node: y, log J, log w, log p; the node set's total.
	ys := make([]float64, n*d)
	logJ := make([]float64, n)
	logW := make([]float64, n)
	logP := make([]float64, n)
	z := make([]float64, d)
	top := math.Inf(-1)
	for i := 0; i < n; i++ {
		if s.Progress != nil && i > 0 && i%progressNodes == 0 {
			s.Progress(0)
		}
		ns.Point(i, z)
		y := ys[i*d : (i+1)*d]
		if s.ToFitting != nil {
			logJ[i] = s.ToFitting(z, y)
		} else {
			copy(y, z)
		}
		logW[i], logP[i] = ns.LogWeight(i), ns.LogP(i)
		top = max(top, logW[i]+logP[i])
	}
	if math.IsInf(top, 0) || math.IsNaN(top) {
		return nil, fmt.Errorf("compare: the node set holds no mass")
	}
	zn := 0.0
	for i := 0; i < n; i++ {
		zn += special.Exp(logW[i] + logP[i] - top)
	}
	logZn := top + math.Log(zn)
	// p's own change from the rule of step 2h to the finest (relative).
	coarseP := 0.0
	for i := 0; i < n; i++ {
		if ns.Coarse(i) {
			coarseP += special.Exp(logW[i] + logP[i] - logZn)
		}
	}
	errP := math.Abs(float64(int(1)<<d)*coarseP - 1)
	// p's weights (normalised), and the nodes whose y and Jacobian are
	// finite; skipped is p's share at the others.
	pm := make([]float64, n)
	valid := make([]bool, n)
	cell := make([]float64, n) // a node's cell side on the fitting scale: exp((log w + log J) / d)
	skipped := 0.0
	for i := 0; i < n; i++ {
		if s.Progress != nil && i > 0 && i%progressNodes == 0 {
			s.Progress(0)
		}
		pm[i] = special.Exp(logW[i] + logP[i] - logZn)
		valid[i] = finite(ys[i*d:(i+1)*d]) && !math.IsNaN(logJ[i]) && !math.IsInf(logJ[i], 0)
		if !valid[i] {
			skipped += pm[i]
		}
		cell[i] = special.Exp((logW[i] + logJ[i]) / float64(d))
	}
	coarseNode := make([]bool, n)
	for i := range coarseNode {
		coarseNode[i] = ns.Coarse(i)
	}
	in := &nodeInputs{d: d, ys: ys, logW: logW, logP: logP, logJ: logJ, pm: pm, cell: cell,
		valid: valid, coarse: coarseNode, logZn: logZn, r0: math.Sqrt(special.ChiSquareQuantile(d, 0.95))}
	r0 := in.r0
	tol := s.QMassTol
	if tol <= 0 {
		tol = 1e-6
	}
	all, err := in.sumAll(s.Context, qs, s.Progress)
	if err != nil {
		return nil, err
	}
	out := make([]Result, len(qs))
	for qi, q := range qs {
		if s.Context != nil {
			if err := s.Context.Err(); err != nil {
				return nil, err
			}
		}
		res := Result{Method: OnNodes}
		sum := all[qi]
		klpq, bhat, bhat2, qmass := sum.klpq, sum.bhat, sum.bhat2, sum.qmass
		cover, coverCoarse, nearest := sum.cover, sum.coverCoarse, sum.nearest
		if skipped > 1e-12 {
			// p has mass where the fitting scale rounds to a bound: the
			// sums are not defined there.
			klpq, bhat = math.NaN(), math.NaN()
		}
		res.KLpq = max(0, klpq)
		if math.IsNaN(klpq) {
			res.KLpq = math.NaN()
		}
		res.Hellinger = math.Sqrt(max(0, 1-bhat))
		if math.IsNaN(bhat) {
			res.Hellinger = math.NaN()
		}
		res.QMass = qmass
		res.Coverage95 = max(0, min((4*cover[0]-cover[1])/3, 1))
		coverChange := math.Abs(res.Coverage95 - max(0, min((4*coverCoarse[0]-coverCoarse[1])/3, 1)))
		rel := math.Abs(bhat-bhat2) / bhat
		// Resolved speaks for the coverage: the nodes near q's mean are
		// at most one of q's sds apart. The Hellinger distance needs the
		// Bhattacharyya sum converged besides (see above).
		res.Resolved = nearest >= 0 && spacingIn(q, logW[nearest]+logJ[nearest], d) <= 1 && coverChange <= coverageTol
		bhatConverged := res.Resolved && rel*rel <= max(tol, errP)
		if !res.Resolved && s.Density != nil {
			// The coverage by a rule over q's region, where it settles.
			c, change, err := ballCoverage(s.Context, s.Density, q, s.LogZ, r0)
			if s.Context != nil && s.Context.Err() != nil {
				return nil, s.Context.Err()
			}
			if err == nil && change <= ballCoverTol {
				res.Coverage95, res.CoverageInBall = max(0, min(c, 1)), true
			}
		}
		res.KLqp = math.NaN()
		if s.Density != nil {
			gp := &gaussianPrep{Prepared: q}
			kl, hel, err := cubature(s.Context, s.Density, gp, s.LogZ, s.Order, s.Progress)
			if err != nil {
				return nil, fmt.Errorf("gaussian %d: %w", qi, err)
			}
			res.KLqp = kl
			if !bhatConverged {
				res.Hellinger = hel
			}
		}
		if s.Bounded {
			res.KLqp = math.Inf(1)
		}
		res.MeanErrSD = make([]float64, d)
		res.SDRatio = make([]float64, d)
		for k := 0; k < d; k++ {
			res.MeanErrSD[k] = (q.Mean[k] - s.Mean[k]) / s.SD[k]
			res.SDRatio[k] = math.Sqrt(q.Cov.At(k, k)) / s.SD[k]
		}
		out[qi] = res
	}
	return out, nil
}

// nodeInputs are the per-node values that every Gaussian's sums over the
// node set read (CompareNodes): y on the fitting scale (d per node), log w,
// log p, log J, p's normalised weight, the cell's side, whether y and J
// are finite and whether the node is also a coarse one; the node set's
// log total and the radius of the central 95 % region.
type nodeInputs struct {
	d                              int
	ys, logW, logP, logJ, pm, cell []float64
	valid, coarse                  []bool
	logZn, r0                      float64
}

// nodeSums are one Gaussian's sums over the node set (see CompareNodes):
// KL(p||q), the Bhattacharyya sums on the finest and the coarse nodes,
// q's mass, the smoothed coverages at both widths on both rules, and the
// node nearest q's mean (-1 when none is valid).
type nodeSums struct {
	klpq, bhat, bhat2, qmass float64
	cover, coverCoarse       [2]float64
	nearest                  int
}

// sumAll returns each Gaussian's sums. Where the program has more than
// one processor the Gaussians are summed concurrently, each by one
// goroutine (each sum in the same order as alone: the results do not
// depend on it), and progress hears after each; otherwise one after
// another, progress hearing within each too (in the browser the pauses
// are in progress).
func (in *nodeInputs) sumAll(ctx context.Context, qs []*gauss.Prepared, progress func(float64)) ([]nodeSums, error) {
	n := len(in.logW)
	out := make([]nodeSums, len(qs))
	done := func() error {
		if ctx != nil {
			return ctx.Err()
		}
		return nil
	}
	if workers := min(runtime.GOMAXPROCS(0), len(qs)); workers > 1 {
		var next atomic.Int64
		var wg sync.WaitGroup
		for range workers {
			wg.Go(func() {
				ms := make([]float64, n)
				for {
					qi := int(next.Add(1) - 1)
					if qi >= len(qs) || done() != nil {
						return
					}
					out[qi] = in.sums(qs[qi], ms, nil)
				}
			})
		}
		wg.Wait()
		if err := done(); err != nil {
			return nil, err
		}
		if progress != nil {
			progress(1)
		}
		return out, nil
	}
	ms := make([]float64, n)
	for qi, q := range qs {
		if err := done(); err != nil {
			return nil, err
		}
		var at func(float64)
		if progress != nil {
			at = func(f float64) { progress((float64(qi) + f) / float64(len(qs))) }
		}
		out[qi] = in.sums(q, ms, at)
		if progress != nil {
			progress(float64(qi+1) / float64(len(qs)))
		}
	}
	return out, nil
}

// sums is one Gaussian's pass over the nodes (ms is scratch for their
// Mahalanobis squares); at, when set, hears the fraction done every
// progressNodes nodes.
func (in *nodeInputs) sums(q *gauss.Prepared, ms []float64, at func(float64)) nodeSums {
	d, n := in.d, len(in.logW)
	out := nodeSums{nearest: -1}
	coarse := float64(int(1) << d)
	nearestM := math.Inf(1)
	logNorm, halfLogDet := q.LogNorm(), q.LogDet()/2
	cellScale := special.Exp(-halfLogDet / float64(d)) // the cell side in q's whitened coordinates
	q.Mahalanobis2Points(in.ys, ms)
	for i := 0; i < n; i++ {
		if at != nil && i > 0 && i%progressNodes == 0 {
			at(float64(i) / float64(n))
		}
		if !in.valid[i] {
			continue
		}
		M := ms[i]
		lq := logNorm - M/2
		if M < nearestM {
			out.nearest, nearestM = i, M
		}
		m, lp := in.pm[i], in.logP[i]-in.logZn
		if m > 0 {
			out.klpq += m * (lp - in.logJ[i] - lq)
		}
		// q's share of the node, and the Bhattacharyya term sqrt(p q)
		// from it (where q's share underflows, the term is below
		// sqrt(p 1e-308): nothing).
		if e := in.logW[i] + lq + in.logJ[i]; e > -745 {
			qm := special.Exp(e)
			out.qmass += qm
			b := math.Sqrt(m * qm)
			out.bhat += b
			if in.coarse[i] {
				out.bhat2 += coarse * b
			}
		}
		if !(m > negligibleShare) {
			continue
		}
		// The coverage's smoothed indicator (see CompareNodes), on the
		// finest rule and on the rule of twice the step (whose cells are
		// twice as wide, its weights 2^d times).
		h := in.cell[i] * cellScale
		gap := math.Sqrt(M) - in.r0
		smoothed(&out.cover, m, gap, h)
		if in.coarse[i] {
			smoothed(&out.coverCoarse, coarse*m, gap, 2*h)
		}
	}
	return out
}

// spacingIn returns the side of a cube of the volume exp(logVol) (on the
// fitting scale) in q's whitened coordinates: a node's spacing in q's sds.
func spacingIn(q *gauss.Prepared, logVol float64, d int) float64 {
	return special.Exp((logVol - q.LogDet()/2) / float64(d))
}

// smoothed adds m times the smoothed indicator of q's region (gap from
// its boundary in q's radius, node spacing h) at each width of
// coverageWidths to cover.
func smoothed(cover *[2]float64, m, gap, h float64) {
	for w, f := range coverageWidths {
		switch s := f * h; {
		case gap > smoothReach*s:
		case gap < -smoothReach*s:
			cover[w] += m
		default:
			cover[w] += m * special.NormalUpper(gap/s)
		}
	}
}

// smoothReach is the distance from the boundary, in smoothing widths,
// beyond which the smoothed indicator is taken as 0 or 1: Phi(-7) is
// 1.3e-12, below anything the coverage resolves, and each width has its
// own reach (the error function is most of the coverage's time in 4-D).
const smoothReach = 7

// progressNodes is the number of nodes between two progress reports
// within one Gaussian's sums (a 4-D rule has about 2e5 nodes).
const progressNodes = 8192

// negligibleShare is p's share of a node below which the node is left out
// of the coverage's sums: the 4-D rules hold about 2e5 nodes, so together
// those left out carry less than 2e-12 of the mass.
const negligibleShare = 1e-17

// coverageTol is the largest change of a coverage between the rules of
// steps h and 2h for which the finest's is reported. The change bounds the
// finest rule's error on the cases measured: a q equal to a correlated 2-D
// normal p (change 1.8e-3, error 2.5e-4 against 0.95); the 3-D sensor
// example's four fits (changes 1.5e-3 to 5.3e-3, errors 1.6e-4 to 4.3e-4
// against a 201^3 grid); the funnel's Laplace fit (change 1.0e-2, error
// 6.4e-3 against a 1-D quadrature), which is left out.
const coverageTol = 6e-3

func finite(y []float64) bool {
	for _, v := range y {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return false
		}
	}
	return true
}
