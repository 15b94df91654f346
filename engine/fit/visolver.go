package fit

import (
	"fmt"
	"math"
	"sync"

	"bellcheck/engine/target"
)

// viState is one iterate of the reverse-KL fit with its cubature
// expectations. Matrices are row-major d×d.
type viState struct {
	mu, prec, cov, l []float64
	logDetCov        float64
	elogp, elbo      float64
	eg, eh           []float64
	// theta packs (mu, Λ) and f the map's residual G(theta) - theta, both
	// whitened by the initial Gaussian (see viSolver.pack).
	theta, f []float64
}

// viSolver holds the cubature rule and all scratch space of one fit.
type viSolver struct {
	p             target.Density
	d, n          int // dimension, number of packed parameters
	diag          bool
	r             rule
	l0            []float64 // the initial Gaussian's Cholesky factor (see pack)
	white         []float64 // scratch for whiten and unpack
	c, col, tmp   []float64
	negEH, cNegEH []float64
	thetaTry      []float64
	aa            anderson
	evals         int
	// parts are the cubature passes' parts (see splitNodes), each with
	// its density: p, or a helper given (Settings.Helpers), which runs its
	// part concurrently.
	parts []viPart
	wg    sync.WaitGroup
}

// newSolver allocates a solver and all its scratch space for density p and
// cubature rule r.
func newSolver(p target.Density, r rule, diag bool, helpers []target.Density) *viSolver {
	d := p.Dim()
	n := d + d*(d+1)/2
	if diag {
		n = 2 * d
	}
	v := &viSolver{p: p, d: d, n: n, diag: diag, r: r, l0: make([]float64, d*d), white: make([]float64, d*d),
		c: make([]float64, d*d), col: make([]float64, d), tmp: make([]float64, d*d),
		negEH: make([]float64, d*d), cNegEH: make([]float64, d*d), thetaTry: make([]float64, n)}
	for i := 0; i < d; i++ {
		v.l0[i*d+i] = 1
	}
	v.aa = newAnderson(n, min(andersonMemory, n))
	v.parts = []viPart{newPart(p, d), newPart(p, d)}
	for i, h := range helpers {
		if i+1 < len(v.parts) {
			v.parts[i+1].p = h
		}
	}
	return v
}

func (v *viSolver) newState() *viState {
	d := v.d
	return &viState{mu: make([]float64, d), prec: make([]float64, d*d), cov: make([]float64, d*d),
		l: make([]float64, d*d), eg: make([]float64, d), eh: make([]float64, d*d),
		theta: make([]float64, v.n), f: make([]float64, v.n)}
}

// coarseOrder is the order of the check rule for a rule of the given
// order: a quarter fewer nodes per axis, at least two fewer. (Rules of
// neighbouring orders err alike where the cubature converges slowly, so the
// check rule must differ by more than a node or two.)
func coarseOrder(order int) int { return order - max(2, order/4) }

// check evaluates the final iterate cur under the coarser check rule
// (see coarseOrder) (into scratch), and returns the change in the ELBO and the
// larger of cur's two residuals under that rule; NaN for both when the
// order is under 3 or the coarser rule meets a non-finite log p.
func (v *viSolver) check(cur, scratch *viState, order int) (elboDiff, residual float64) {
	if order < 3 {
		return math.NaN(), math.NaN()
	}
	coarse, err := newRule(v.d, coarseOrder(order))
	if err != nil {
		return math.NaN(), math.NaN()
	}
	fine := v.r
	v.r = coarse
	defer func() { v.r = fine }()
	copy(scratch.mu, cur.mu)
	copy(scratch.cov, cur.cov)
	copy(scratch.prec, cur.prec)
	copy(scratch.l, cur.l)
	scratch.logDetCov = cur.logDetCov
	if v.evaluate(scratch) != nil {
		return math.NaN(), math.NaN()
	}
	gr, pr := v.residuals(scratch)
	return math.Abs(scratch.elbo - cur.elbo), max(gr, pr)
}

// negligibleNode is the cubature weight below which a node where log p is
// -Inf is left out rather than taken for a zero of the density: q holds
// less mass than that there (the outermost nodes of the 80-node rule, at
// 13 sd, weigh 6e-38).
const negligibleNode = 1e-30

// evaluate fills st's expectations, ELBO and packed map residual by
// cubature over N(st.mu, st.l st.lᵀ).
func (v *viSolver) evaluate(st *viState) error {
	d := v.d
	n := len(v.r.w)
	parts := 1
	if n >= splitNodes {
		parts = len(v.parts)
	}
	// Each part's sums over its share of the nodes, the helpers' parts on
	// goroutines of their own, then added in the parts' order: the same
	// numbers however many run at once.
	wg := &v.wg
	for k := 1; k < parts; k++ {
		c := &v.parts[k]
		lo, hi := k*n/parts, (k+1)*n/parts
		if c.p == v.p {
			c.sum(v.r, st, lo, hi)
			continue
		}
		wg.Go(func() { c.sum(v.r, st, lo, hi) })
	}
	v.parts[0].sum(v.r, st, 0, n/parts)
	wg.Wait()
	for i := range st.eg {
		st.eg[i] = 0
	}
	for i := range st.eh {
		st.eh[i] = 0
	}
	elogp := 0.0
	for k := 0; k < parts; k++ {
		c := &v.parts[k]
		if c.err != nil {
			if c.err == ErrInfiniteKL {
				return infiniteKL(c.x)
			}
			return c.err
		}
		elogp += c.elogp
		for i := range st.eg {
			st.eg[i] += c.eg[i]
		}
		for i := range st.eh {
			st.eh[i] += c.eh[i]
		}
	}
	v.evals++
	if !allFinite(st.eg) || !allFinite(st.eh) {
		return v.badDerivs(st)
	}
	symmetrize(st.eh, d)
	st.elogp = elogp
	st.elbo = elogp + entropyFromLogDet(d, st.logDetCov)
	v.pack(st)
	return nil
}

// splitNodes is the size of rule from which a cubature pass sums its
// nodes in parts (viPart), on helpers where the fit has them: the 3-D
// default rule (512 nodes) and beyond. Smaller rules are summed whole,
// in one order on every machine.
const splitNodes = 512

// viPart is one part of a cubature pass over the nodes: its density,
// scratch, sums, and the error that stopped it.
type viPart struct {
	p             target.Density
	x, grad, hess []float64
	eg, eh        []float64
	elogp         float64
	err           error
}

func newPart(p target.Density, d int) viPart {
	return viPart{p: p, x: make([]float64, d), grad: make([]float64, d), hess: make([]float64, d*d),
		eg: make([]float64, d), eh: make([]float64, d*d)}
}

// sum adds the expectations of c.p over the nodes lo to hi-1 of r under
// st's Gaussian into c (after zeroing it); c.err is set where log p is
// -Inf at a node that carries weight (ErrInfiniteKL, c.x the point) or
// NaN or +Inf.
func (c *viPart) sum(r rule, st *viState, lo, hi int) {
	d := len(c.x)
	c.elogp, c.err = 0, nil
	for i := range c.eg {
		c.eg[i] = 0
	}
	for i := range c.eh {
		c.eh[i] = 0
	}
	for k := lo; k < hi; k++ {
		w := r.w[k]
		c.at(st, r.z[k*d:k*d+d])
		f := c.p.LogDensityDerivs(c.x, c.grad, c.hess)
		if math.IsInf(f, -1) {
			if w < negligibleNode {
				// Far out in q's tail: a density that underflowed there (as
				// 1 - x does on the logit scale beyond z = 37) more likely
				// than one that is zero; the node's part of any log p down
				// to -1e15 would be below rounding.
				continue
			}
			c.err = ErrInfiniteKL
			return
		}
		if math.IsNaN(f) || math.IsInf(f, 1) {
			c.err = fmt.Errorf("%w: log p is %v at %v", ErrNonFinite, f, c.x)
			return
		}
		c.elogp += w * f
		for i, g := range c.grad {
			c.eg[i] += w * g
		}
		for i, h := range c.hess {
			c.eh[i] += w * h
		}
	}
}

// at sets c.x to the cubature node z under st's Gaussian: mu + L z.
func (c *viPart) at(st *viState, z []float64) {
	d := len(z)
	for i := 0; i < d; i++ {
		xi := st.mu[i]
		for j := 0; j <= i; j++ {
			xi += st.l[i*d+j] * z[j]
		}
		c.x[i] = xi
	}
}

// infiniteKL is the error of a density that is zero at x, where the
// Gaussian has mass.
func infiniteKL(x []float64) error {
	return fmt.Errorf("%w: log p is -Inf at %v, where the Gaussian has mass: the support is bounded on this scale, so no Gaussian has a finite KL(q||p); fit the parameter on the log or logit scale", ErrInfiniteKL, x)
}

// badDerivs finds a cubature node where the gradient or Hessian is not
// finite, for the message.
func (v *viSolver) badDerivs(st *viState) error {
	d := v.d
	c := &v.parts[0]
	for k := range v.r.w {
		c.at(st, v.r.z[k*d:k*d+d])
		v.p.LogDensityDerivs(c.x, c.grad, c.hess)
		if !allFinite(c.grad) || !allFinite(c.hess) {
			return fmt.Errorf("%w: gradient %v or Hessian %v of log p at %v", ErrNonFinite, c.grad, c.hess, c.x)
		}
	}
	return fmt.Errorf("%w: the cubature sums of the gradient or Hessian of log p overflow", ErrNonFinite)
}

// pack writes st's parameters and the fixed-point map's residual, in the
// coordinates whitened by the initial Gaussian's factor L0 (mu as L0⁻¹ mu,
// Λ as L0ᵀ Λ L0), into st.theta and st.f. Only the lower triangle of the
// whitened precision is packed (the diagonal for the mean field, whose L0
// is diagonal). In these coordinates the packed residual is about the
// whitened residuals (see residuals), however correlated the parameters:
// the Anderson step's least squares and the ties between steps weigh
// every direction alike.
func (v *viSolver) pack(st *viState) {
	d := v.d
	// The mean's map: the Newton step where -E[H] is positive definite,
	// else Λ⁻¹ E[g] (diagonal Λ for the mean field).
	step := v.col
	for i := range v.negEH {
		v.negEH[i] = -st.eh[i]
	}
	copy(step, st.eg)
	if cholesky(v.cNegEH, v.negEH, d) {
		cholSolve(v.cNegEH, step, d)
	} else {
		for i := 0; i < d; i++ {
			t := 0.0
			for j := 0; j < d; j++ {
				t += st.cov[i*d+j] * st.eg[j]
			}
			v.tmp[i] = t
		}
		copy(step, v.tmp[:d])
	}
	forwardSolve(v.l0, step, d)
	copy(st.f[:d], step)
	copy(st.theta[:d], st.mu)
	forwardSolve(v.l0, st.theta[:d], d)
	// The precision and its map's change, whitened.
	v.whiten(v.tmp, st.prec)
	for i := range v.c {
		v.c[i] = v.negEH[i] - st.prec[i]
	}
	v.whiten(v.c, v.c)
	k := d
	for i := 0; i < d; i++ {
		for j := 0; j <= i; j++ {
			if v.diag && i != j {
				continue
			}
			st.theta[k] = v.tmp[i*d+j]
			st.f[k] = v.c[i*d+j]
			k++
		}
	}
}

// whiten writes L0ᵀ a L0 into out (which may be a) for the symmetric a.
func (v *viSolver) whiten(out, a []float64) {
	d, l, w := v.d, v.l0, v.white
	for i := 0; i < d; i++ {
		for j := 0; j < d; j++ {
			t := 0.0
			for k := j; k < d; k++ {
				t += a[i*d+k] * l[k*d+j]
			}
			w[i*d+j] = t
		}
	}
	for i := 0; i < d; i++ {
		for j := 0; j < d; j++ {
			t := 0.0
			for k := i; k < d; k++ {
				t += l[k*d+i] * w[k*d+j]
			}
			out[i*d+j] = t
		}
	}
}

// unpack sets tr's mean and precision from the packed theta (see pack) and
// derives its covariance; it reports whether the precision is positive
// definite.
func (v *viSolver) unpack(theta []float64, tr *viState) bool {
	d, l := v.d, v.l0
	for i := 0; i < d; i++ {
		t := 0.0
		for j := 0; j <= i; j++ {
			t += l[i*d+j] * theta[j]
		}
		tr.mu[i] = t
	}
	w := v.white
	for i := range w {
		w[i] = 0
	}
	k := d
	for i := 0; i < d; i++ {
		for j := 0; j <= i; j++ {
			if v.diag && i != j {
				continue
			}
			w[i*d+j], w[j*d+i] = theta[k], theta[k]
			k++
		}
	}
	// Λ = L0⁻ᵀ W L0⁻¹: each column of W through L0⁻ᵀ, then each row of
	// the result through L0⁻¹ (as the transpose of the same solve).
	col := v.col
	for j := 0; j < d; j++ {
		for i := 0; i < d; i++ {
			col[i] = w[i*d+j]
		}
		backSolve(l, col, d)
		for i := 0; i < d; i++ {
			w[i*d+j] = col[i]
		}
	}
	for i := 0; i < d; i++ {
		copy(col, w[i*d:i*d+d])
		backSolve(l, col, d)
		copy(tr.prec[i*d:i*d+d], col)
	}
	symmetrize(tr.prec, d)
	return allFinite(tr.mu) && v.setCov(tr)
}

// setCov derives tr's covariance, its factor and log-determinant from
// tr.prec, and reports whether tr.prec is positive definite.
func (v *viSolver) setCov(tr *viState) bool {
	d := v.d
	if !allFinite(tr.prec) || !cholesky(v.c, tr.prec, d) {
		return false
	}
	cholInverse(v.c, tr.cov, v.col, d)
	if !cholesky(tr.l, tr.cov, d) {
		return false
	}
	tr.logDetCov = -cholLogDet(v.c, d)
	return true
}

// damped writes into tr the damped step from cur with length a for the
// precision and b for the mean, and reports whether the precision is
// positive definite.
func (v *viSolver) damped(cur, tr *viState, a, b float64) bool {
	d := v.d
	for i := range tr.prec {
		tr.prec[i] = (1-a)*cur.prec[i] - a*cur.eh[i]
	}
	if v.diag {
		for i := 0; i < d; i++ {
			for j := 0; j < d; j++ {
				if i != j {
					tr.prec[i*d+j] = 0
				}
			}
		}
	}
	if !v.setCov(tr) {
		return false
	}
	if v.diag {
		// cur.f holds the mean's map step, whitened by the diagonal L0.
		for i := 0; i < d; i++ {
			tr.mu[i] = cur.mu[i] + b*cur.f[i]*v.l0[i*d+i]
		}
		return allFinite(tr.mu)
	}
	for i := 0; i < d; i++ {
		t := 0.0
		for j := 0; j < d; j++ {
			t += tr.cov[i*d+j] * cur.eg[j]
		}
		tr.mu[i] = cur.mu[i] + b*t
	}
	return allFinite(tr.mu)
}

// residuals returns |Lᵀ E[g]| and the precision residual of st.
func (v *viSolver) residuals(st *viState) (grad, prec float64) {
	d := v.d
	for j := 0; j < d; j++ {
		t := 0.0
		for i := j; i < d; i++ {
			t += st.l[i*d+j] * st.eg[i]
		}
		grad += t * t
	}
	if v.diag {
		for i := 0; i < d; i++ {
			r := 1 + st.cov[i*d+i]*st.eh[i*d+i]
			prec += r * r
		}
		return math.Sqrt(grad), math.Sqrt(prec)
	}
	// tmp = E[H] L, then I + Lᵀ tmp.
	for i := 0; i < d; i++ {
		for j := 0; j < d; j++ {
			t := 0.0
			for k := j; k < d; k++ {
				t += st.eh[i*d+k] * st.l[k*d+j]
			}
			v.tmp[i*d+j] = t
		}
	}
	for i := 0; i < d; i++ {
		for j := 0; j < d; j++ {
			t := 0.0
			if i == j {
				t = 1
			}
			for k := i; k < d; k++ {
				t += st.l[k*d+i] * v.tmp[k*d+j]
			}
			prec += t * t
		}
	}
	return math.Sqrt(grad), math.Sqrt(prec)
}

func norm(v []float64) float64 {
	s := 0.0
	for _, x := range v {
		s += x * x
	}
	return math.Sqrt(s)
}

// residualNorm is the larger of st's two residuals (see residuals).
func (v *viSolver) residualNorm(st *viState) float64 {
	g, p := v.residuals(st)
	return max(g, p)
}
