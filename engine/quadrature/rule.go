package quadrature

import (
	"context"
	"fmt"
	"math"
	"sync"

	"bellcheck/engine/target"
	"bellcheck/engine/transform"
)

// level is the state of one axis of the nested rule: its conditional
// centre and scale at the current outer node and the sums over its nodes.
type level struct {
	mode  []float64 // the conditional mode of axes k.. (u coordinates, len d)
	sigma []float64 // the conditional covariance of axes k.. (len (d-k)^2)
	// the inner level's modes at the last two outer nodes and at t = 0
	m0, m1, m00 []float64
	slope       []float64 // d mode_a / d u_k for a > k
	c           float64   // the node map u_k = c + w phi(t) (see offset)
	nodeMap               // w, its width in sds and its sides
	chosen      bool      // chooseMap has probed this axis (see Settings.keepMaps)
	logW        float64   // log of the outer axes' weights (with det L)
	tier        int       // lowest tier of the outer indices
	sum         [3][]float64
	rem         []float64 // truncation remainders (watch layout)
	inf         []bool    // infinite flags (flag layout)
	// the walk's end: watched components of the last two nodes, their peak
	cur, prev, peak []float64
}

// rule is one run of the nested rule.
type rule struct {
	scratch *ruleScratch // the arrays the scratch below is carved from
	ctx     context.Context
	p       target.Density
	d       int
	s       Settings
	lay     layout
	perm    []int           // perm[a]: the parameter of axis a
	maps    []transform.Map // per axis
	m       []float64       // mode, per axis
	xm      []float64       // x(mode), per axis
	L       []float64       // z = m + L u, lower triangular, per axis
	ldL     float64         // log det L
	ref     float64         // log p at the mode
	top     float64         // the largest log p a line evaluated (see sliceLogZAt)
	h       float64
	maxJ    int
	em      *expm1Table // expm1(±j h), for the node maps
	lv      []level
	u       []float64   // the current point in u
	pred    [][]float64 // per level, the predicted conditional mode (len d)

	// scratch
	ut, ut2, v, z, gz, hz, gu, sub, subC, col, step, y, x []float64
	lineT, lineLogP, lineG                                []float64
	lineBad                                               []bool
	cols                                                  [][]float64
	ls                                                    [3]lineSums

	pilot    bool    // the start is a pilot's mean and covariance: no Newton on the outer axis
	boundErr float64 // see boundRounding
	nodes    Nodes
	noNodes  bool      // the rule is a slice's: its nodes are not kept
	outer    []float64 // the outer axis's inner integrals times du/dt (see outerCurve)
	// keepWalks has the rule record its walks along the inner axes (see
	// walkSet): the main rule's.
	keepWalks bool
	walks     walkSet
	walkBuf   [][]float64 // per inner level, the walk's shares by node index
	outerLo   int         // the outer walk's first and last indices
	outerHi   int
	points    int
	derivs    int
	nonFinite int
	// infShare[f] is the largest share per unit t, in the units of the
	// outermost level's sums, that a walk held at its end where it raised
	// infinite flag f (flag layout; see clearStrayFlags).
	infShare []float64
	// resolvedShare[f] is the same over the walks whose density had
	// decayed where they ended, and unresolvedZ[f] the largest share of
	// the density itself over the walks that reached MaxT while it had
	// not (see raise).
	resolvedShare, unresolvedZ []float64
	nearNaN                    int // undefined nodes next to a node holding mass
	done0                      int
}

const maxNewton = 20

// checkStart reports what is wrong with a start and settings for p.
func checkStart(p target.Density, st Start, s Settings) error {
	_, err := startCovChecked(p, st, s)
	return err
}

// startCovChecked checks the start as checkStart does and returns its
// covariance (startCov).
func startCovChecked(p target.Density, st Start, s Settings) ([]float64, error) {
	d := p.Dim()
	if d < 1 || d > 4 {
		return nil, fmt.Errorf("%w: %d parameters (1 to 4 are supported)", ErrBadStart, d)
	}
	if len(st.Mode) != d {
		return nil, fmt.Errorf("%w: a mode of %d coordinates for %d parameters", ErrBadStart, len(st.Mode), d)
	}
	for k, v := range st.Mode {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, fmt.Errorf("%w: coordinate %d of the mode is %g", ErrBadStart, k+1, v)
		}
	}
	if s.Maps != nil && len(s.Maps) != d {
		return nil, fmt.Errorf("%w: %d maps for %d parameters", ErrBadStart, len(s.Maps), d)
	}
	for k, m := range s.Maps {
		if err := m.Check(); err != nil {
			return nil, fmt.Errorf("%w: parameter %d: %v", ErrBadStart, k+1, err)
		}
	}
	return startCov(st, d)
}

// ruleScratch is a rule's scratch: every float and bool slice of the rule
// is carved from f and b.
type ruleScratch struct {
	f []float64
	b []bool
}

// scratchPool recycles the scratch of the rules a marginal's walk makes,
// one a slice (release): they were a fifth of the bytes a 2-D analysis
// allocated.
var scratchPool sync.Pool

// takeScratch returns zeroed scratch of nf floats and nb bools, recycled
// where the pool has one large enough.
func takeScratch(nf, nb int) *ruleScratch {
	if sc, ok := scratchPool.Get().(*ruleScratch); ok && cap(sc.f) >= nf && cap(sc.b) >= nb {
		sc.f, sc.b = sc.f[:nf], sc.b[:nb]
		clear(sc.f)
		clear(sc.b)
		return sc
	}
	return &ruleScratch{f: make([]float64, nf), b: make([]bool, nb)}
}

// release hands the rule's scratch back to the pool: the rule must not be
// used after it.
func (r *rule) release() {
	if r.scratch != nil {
		scratchPool.Put(r.scratch)
		r.scratch = nil
	}
}

func newRule(ctx context.Context, p target.Density, st Start, s Settings) (*rule, error) {
	cov, err := startCovChecked(p, st, s)
	if err != nil {
		return nil, err
	}
	d := p.Dim()
	s = s.withDefaults()
	perm := s.Order
	if perm == nil {
		perm = identityOrder(d)
	}
	if err := checkOrder(perm, d); err != nil {
		return nil, err
	}
	r := &rule{ctx: ctx, p: p, d: d, s: s, lay: newLayout(d), perm: append([]int(nil), perm...)}
	r.h = s.Step
	r.maxJ = int(math.Floor(s.MaxT/r.h + 1e-9))
	r.em = expm1TableFor(r.h, r.maxJ)
	// The rule's scratch is carved from one array of floats and one of
	// bools: a pair plot makes a rule per point (in 3-D over 1,300), and
	// their forty-odd small allocations each were 85,000 allocations of
	// the sensor example's analysis with plots (27,000 now, with
	// conditional's, and 3 to 4 % less time natively).
	nw := r.lay.nWatch
	n := 2*r.maxJ + 1
	nf := 13*d + 5*d*d + 3*(1+8*d) + d*(6*d+d*d+3*r.lay.n+4*nw) + 3*n
	if d > 1 {
		nf += n + max(d-2, 0)*n
	}
	nf += d * n
	r.scratch = takeScratch(nf, n+d*(1+8*d))
	cv := r.carve(&carver{f: r.scratch.f, b: r.scratch.b}, st, cov, n)
	if !cholesky(r.L, cv, d) {
		return nil, fmt.Errorf("%w: the covariance is not positive definite", ErrBadStart)
	}
	r.ldL = cholLogDet(r.L, d) / 2
	r.toZ(r.u)
	r.ref = p.LogDensity(r.z)
	r.top = r.ref
	r.points++
	if math.IsNaN(r.ref) || math.IsInf(r.ref, 0) {
		return nil, fmt.Errorf("%w: log p at the mode is %g", ErrBadStart, r.ref)
	}
	return r, nil
}

// carver hands out consecutive pieces of a rule's scratch. Its methods
// are kept out of line: inlined at each of newRule's fifty-odd pieces they
// made it one of the largest functions of app.wasm, which the browser's
// optimising compiler took about 0.3 s to compile (DEVELOPERS.md).
type carver struct {
	f []float64
	b []bool
}

//go:noinline
func (c *carver) floats(k int) []float64 {
	out := c.f[:k:k]
	c.f = c.f[k:]
	return out
}

//go:noinline
func (c *carver) flags(k int) []bool {
	out := c.b[:k:k]
	c.b = c.b[k:]
	return out
}

// carve sets the rule's slices from c (the start's mode in the rule's
// order, the walks' buffers) for lines of n nodes, and returns the start's
// covariance in the rule's order.
func (r *rule) carve(c *carver, st Start, cov []float64, n int) []float64 {
	d, s := r.d, r.s
	nw := r.lay.nWatch
	r.maps = make([]transform.Map, d)
	r.m = c.floats(d)
	r.xm = c.floats(d)
	cv := c.floats(d * d)
	for a := 0; a < d; a++ {
		pa := r.perm[a]
		r.maps[a] = transform.Map{Scale: transform.Identity, Lo: math.Inf(-1), Hi: math.Inf(1)}
		if s.Maps != nil {
			r.maps[a] = s.Maps[pa]
		}
		r.m[a] = st.Mode[pa]
		r.xm[a] = r.maps[a].ToOriginal(r.m[a])
		for b := 0; b < d; b++ {
			cv[a*d+b] = cov[pa*d+r.perm[b]]
		}
	}
	r.L = c.floats(d * d)
	for _, v := range []*[]float64{&r.u, &r.ut, &r.ut2, &r.v, &r.z, &r.gz, &r.gu, &r.col, &r.step, &r.y, &r.x} {
		*v = c.floats(d)
	}
	r.hz = c.floats(d * d)
	r.sub = c.floats(d * d)
	r.subC = c.floats(d * d)
	r.lv = make([]level, d)
	r.pred = make([][]float64, d)
	r.infShare = c.floats(1 + 8*d)
	r.resolvedShare = c.floats(1 + 8*d)
	r.unresolvedZ = c.floats(1 + 8*d)
	for k := range r.lv {
		lv := &r.lv[k]
		for _, v := range []*[]float64{&lv.mode, &lv.slope, &lv.m0, &lv.m1, &lv.m00} {
			*v = c.floats(d)
		}
		lv.sigma = c.floats(d * d)
		for t := range lv.sum {
			lv.sum[t] = c.floats(r.lay.n)
		}
		lv.rem = c.floats(nw)
		lv.inf = c.flags(1 + 8*d)
		lv.cur, lv.prev, lv.peak = c.floats(nw), c.floats(nw), c.floats(nw)
		r.pred[k] = c.floats(d)
	}
	r.lineT = c.floats(n)
	r.lineLogP = c.floats(n)
	r.lineG = c.floats(n)
	r.lineBad = c.flags(n)
	if d > 1 {
		r.outer = c.floats(n)
		r.walkBuf = make([][]float64, d)
		for k := 1; k < d-1; k++ {
			r.walkBuf[k] = c.floats(n)
		}
	}
	r.cols = make([][]float64, d)
	for k := range r.cols {
		r.cols[k] = c.floats(n)
	}
	return cv
}

// startCov returns the covariance of the start (row-major, parameter order).
func startCov(st Start, d int) ([]float64, error) {
	src, name := st.NegHessian, "negative Hessian"
	if src == nil {
		src, name = st.Cov, "covariance"
	}
	if len(src) != d*d {
		return nil, fmt.Errorf("%w: a %s of %d entries for %d parameters", ErrBadStart, name, len(src), d)
	}
	for _, v := range src {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, fmt.Errorf("%w: the %s is not finite", ErrBadStart, name)
		}
	}
	a := make([]float64, d*d)
	for i := 0; i < d; i++ {
		for j := 0; j < d; j++ {
			a[i*d+j] = (src[i*d+j] + src[j*d+i]) / 2
		}
	}
	if st.NegHessian == nil {
		return a, nil
	}
	c := make([]float64, d*d)
	if !cholesky(c, a, d) {
		return nil, fmt.Errorf("%w: the negative Hessian is not positive definite", ErrBadStart)
	}
	inv := make([]float64, d*d)
	cholInverse(c, inv, make([]float64, d), d)
	return inv, nil
}

func identityOrder(d int) []int {
	o := make([]int, d)
	for i := range o {
		o[i] = i
	}
	return o
}

func checkOrder(o []int, d int) error {
	if len(o) != d {
		return fmt.Errorf("%w: an order of %d axes for %d parameters", ErrBadStart, len(o), d)
	}
	seen := make([]bool, d)
	for _, a := range o {
		if a < 0 || a >= d || seen[a] {
			return fmt.Errorf("%w: the order %v is not a permutation", ErrBadStart, o)
		}
		seen[a] = true
	}
	return nil
}

// toZ writes z (parameter order) and v (axis order) for the point u.
func (r *rule) toZ(u []float64) {
	d := r.d
	for a := 0; a < d; a++ {
		s := r.m[a]
		for b := 0; b <= a; b++ {
			s += r.L[a*d+b] * u[b]
		}
		r.v[a] = s
		r.z[r.perm[a]] = s
	}
}

// tierOf returns 2 for an index in the rule of step 4h, 1 for 2h, else 0.
func tierOf(j int) int {
	switch {
	case j%4 == 0:
		return 2
	case j%2 == 0:
		return 1
	}
	return 0
}

// run integrates the whole density.
func (r *rule) run() error {
	lv := &r.lv[0]
	lv.logW = r.ldL
	lv.tier = 2
	for a := range r.pred[0] {
		r.pred[0][a] = 0
	}
	return r.axis(0)
}

// axis integrates axes k.. at the current outer point r.u[:k], leaving the
// sums in r.lv[k].
func (r *rule) axis(k int) error {
	if err := r.ctx.Err(); err != nil {
		return err
	}
	lv := &r.lv[k]
	r.condition(k)
	for t := range lv.sum {
		clear(lv.sum[t])
	}
	clear(lv.rem)
	clear(lv.inf)
	r.fixedOffsets(k)
	if k == r.d-1 {
		return r.line()
	}
	child := &r.lv[k+1]
	nl := 1 + 4*(r.d-k)
	cur, prev, peak := lv.cur[:nl], lv.prev[:nl], lv.peak[:nl]
	clear(peak)
	// The inner modes are predicted from the last two outer nodes' (by
	// linear extrapolation in u_k), or from the Gaussian regression line
	// until there are two.
	m0, m1, m00 := lv.m0, lv.m1, lv.m00
	var u0, u1, u00 float64
	wlo, whi := 0, 0
	for _, side := range [2]int{1, -1} {
		first := true
		known := 0
		if side < 0 {
			copy(m1, m00)
			u1 = u00
			known = 1
		}
		for j := (1 - side) / 2 * -1; ; j += side {
			t := float64(j) * r.h
			du := lv.offsetAt(j, r.em)
			r.u[k] = lv.c + du
			for a := k + 1; a < r.d; a++ {
				switch known {
				case 0:
					r.pred[k+1][a] = lv.mode[a] + lv.slope[a]*du
				case 1:
					r.pred[k+1][a] = m1[a] + lv.slope[a]*(r.u[k]-u1)
				default:
					r.pred[k+1][a] = m1[a] + (m1[a]-m0[a])*(r.u[k]-u1)/(u1-u0)
				}
			}
			wt := r.h * lv.jacAt(j, r.em)
			child.logW = lv.logW + math.Log(wt)
			child.tier = min(lv.tier, tierOf(j))
			if err := r.axis(k + 1); err != nil {
				return err
			}
			m0, m1 = m1, m0
			copy(m1, child.mode)
			u0, u1 = u1, r.u[k]
			known++
			if j == 0 {
				copy(m00, child.mode)
				u00 = r.u[k]
			}
			addScaled(lv.sum[0], child.sum[0], wt)
			if k == 0 && r.outer != nil {
				r.outer[j+r.maxJ] = child.sum[0][0] * lv.jacAt(j, r.em)
				r.outerLo, r.outerHi = min(r.outerLo, j), max(r.outerHi, j)
			}
			if k > 0 && r.keepWalks {
				r.walkBuf[k][j+r.maxJ] = child.sum[0][0] * lv.jacAt(j, r.em)
				wlo, whi = min(wlo, j), max(whi, j)
			}
			if j%2 == 0 {
				addScaled(lv.sum[1], child.sum[1], 2*wt)
			}
			if j%4 == 0 {
				addScaled(lv.sum[2], child.sum[2], 4*wt)
			}
			addScaled(lv.rem, child.rem, wt)
			for i, f := range child.inf {
				lv.inf[i] = lv.inf[i] || f
			}
			r.localWatch(k, child.sum[0], wt, cur)
			raisePeak(peak, cur)
			if k == 0 {
				r.done0++
				r.report()
			}
			at := math.Abs(t)
			if stop, remZ := r.endCheck(k, cur, prev, peak, at, first); stop {
				r.recordOthers(k, remZ)
				break
			}
			first = false
			cur, prev = prev, cur
		}
	}
	if k > 0 && r.keepWalks {
		r.recordWalk(k, r.walkBuf[k][wlo+r.maxJ:whi+1+r.maxJ], wlo, 1)
	}
	return nil
}

// localWatch writes the watched components of axes k.. of a full vector
// scaled by f: the density, then per axis a >= k its y^2, y^4, x~^2, x~^4.
func (r *rule) localWatch(k int, full []float64, f float64, w []float64) {
	l := r.lay
	w[0] = f * full[0]
	for a := k; a < r.d; a++ {
		p := l.y2 + l.pair(a, a)
		b := 1 + 4*(a-k)
		w[b] = f * full[p]
		w[b+1] = f * full[l.y4+a]
		w[b+2] = f * full[l.xo+p]
		w[b+3] = f * full[l.xo+l.y4+a]
	}
}

func addScaled(dst, src []float64, f float64) {
	for i, v := range src {
		dst[i] += f * v
	}
}

func (r *rule) report() {
	if r.s.Progress == nil {
		return
	}
	// The outer axis typically has about 20 nodes; the estimate only
	// needs to move forward.
	f := float64(r.done0) / float64(r.done0+6)
	r.s.Progress(min(f, 0.99))
}
