package eval

import (
	"math"

	"bellcheck/engine/internal/dense"
)

// Sums of squares of affine vector expressions as quadratic forms.
//
// A vector expression v = c0 + sum_j s_j x_j, with constant vectors c0 and
// x_j (the data) and scalar expressions s_j (parameters, or scalar
// expressions of them), has sum_i w_i v_i^2 = ||r + X s||^2 where the rows of
// r and X are c0 and the x_j scaled by sqrt(w_i). At compile time:
//
//  1. beta0 is the least-squares solution of X beta = -r (by the thin SVD,
//     dense.ThinSVD; minimum norm where X is rank deficient), and r0 = r + X beta0 the
//     residual there, computed element by element from the data;
//  2. with the thin SVD X = U diag(sigma) V^T, R = diag(sigma) V^T (one row
//     per non-zero singular value), q = U^T r0 (about 0: r0 is orthogonal
//     to the columns of X up to rounding) and C = r0^T r0 - q^T q (the part
//     of r0 outside X's columns, >= 0).
//
// Then for every s, with delta = s - beta0,
//
//	||r + X s||^2 = ||r0 + X delta||^2 = C + ||R delta + q||^2,
//
// exact in real arithmetic whatever beta0 is. Expanding around beta0 keeps
// large terms from cancelling: with data y ~ 1e6 and an offset near 1e6 the
// naive sum(y^2) - 2 s sum(y) + n s^2 loses all digits, while here r0 is
// formed from the data as the direct evaluation forms its residuals, delta
// is small near the fit, and the result is a sum of non-negative terms. Its
// error is that of forming r0 (eps |y_i| per element, as in the direct
// evaluation) plus a few ulps of the result; the per-point cost is O(m^2)
// for m scalar terms instead of O(n m).

// rewriteQuadratic turns the quadratic forms on (tests compare with it off).
var rewriteQuadratic = true

// maxQuadTerms bounds the scalar terms of a quadratic form.
const maxQuadTerms = 8

// affine is a vector expression c0 + sum_j terms[j].s * terms[j].coef of n
// elements; c0 nil means zeros.
type affine struct {
	c0    []float64
	terms []affTerm
}

// affTerm is a scalar node times a constant vector.
type affTerm struct {
	s    int32
	coef []float64
}

// quadForm builds sum_i w_i v_i^2 (w nil: all 1) as a quadratic form in v's
// scalar terms, where v is affine in them with constant coefficients.
func (b *builder) quadForm(v int32, w []float64) (int32, bool) {
	nd := b.nd(v)
	if !rewriteQuadratic || !nd.vector() || nd.cst {
		return 0, false
	}
	n := nd.n
	budget := 512
	aff, ok := b.affineOf(v, n, &budget)
	m := len(aff.terms)
	if !ok || m == 0 || m > maxQuadTerms {
		return 0, false
	}
	// The weighted system: rows scaled by sqrt(w_i).
	X := make([]float64, n*m)
	r := make([]float64, n)
	for i := 0; i < n; i++ {
		sw := 1.0
		if w != nil {
			sw = math.Sqrt(w[i])
		}
		if aff.c0 != nil {
			r[i] = sw * aff.c0[i]
		}
		for j, t := range aff.terms {
			X[i*m+j] = sw * t.coef[i]
		}
		if !isFinite(r[i]) {
			return 0, false
		}
		for j := 0; j < m; j++ {
			if !isFinite(X[i*m+j]) {
				return 0, false
			}
		}
	}
	U, sv, V, ok := dense.ThinSVD(X, n, m)
	if !ok || len(sv) == 0 || !(sv[0] > 0) {
		return 0, false
	}
	// beta0: least squares of X beta = -r, over the singular values above
	// max(n, m) eps of the largest (the numerical rank), minimum norm.
	rank := 0
	for _, s := range sv {
		if s > float64(max(n, m))*0x1p-52*sv[0] {
			rank++
		}
	}
	beta0 := make([]float64, m)
	for t := 0; t < rank; t++ {
		ub := 0.0
		for i := 0; i < n; i++ {
			ub -= U[i*m+t] * r[i]
		}
		for j := 0; j < m; j++ {
			beta0[j] += V[j*m+t] * ub / sv[t]
		}
	}
	for j := 0; j < m; j++ {
		if !isFinite(beta0[j]) {
			return 0, false
		}
	}
	// r0 = r + X beta0, formed from the data element by element.
	r0 := make([]float64, n)
	for i := range r0 {
		s := r[i]
		for j := 0; j < m; j++ {
			s += X[i*m+j] * beta0[j]
		}
		r0[i] = s
	}
	sq := make([]float64, n)
	for i, x := range r0 {
		sq[i] = x * x
	}
	c := constSum(sq)
	// One row of R per non-zero singular value, with q_t = u_t^T r0.
	var rows [][]float64
	var qs []float64
	prod := make([]float64, n)
	for t, s := range sv {
		if !(s > 0) {
			continue
		}
		row := make([]float64, m)
		for j := range row {
			row[j] = s * V[j*m+t]
		}
		for i := range prod {
			prod[i] = U[i*m+t] * r0[i]
		}
		q := constSum(prod)
		rows = append(rows, row)
		qs = append(qs, q)
		c -= q * q
	}
	c = max(c, 0)
	// The graph: C + sum_t (q_t + sum_j R_tj (s_j - beta0_j))^2.
	delta := make([]int32, m)
	for j, t := range aff.terms {
		delta[j] = b.addK(t.s, -beta0[j])
	}
	var acc int32 = -1
	for t, row := range rows {
		var lin int32 = -1
		for j, rj := range row {
			if rj == 0 {
				continue
			}
			term := b.mulK(delta[j], rj)
			if lin < 0 {
				lin = term
			} else {
				lin = b.plus(lin, term)
			}
		}
		if lin < 0 {
			continue
		}
		sqr := b.un(opSq, b.addK(lin, qs[t]), 0)
		if acc < 0 {
			acc = sqr
		} else {
			acc = b.plus(acc, sqr)
		}
	}
	if acc < 0 {
		return 0, false
	}
	return b.addK(acc, c), b.err == nil
}

// affineOf decomposes the vector node id (n elements) as an affine
// expression in scalar nodes with constant coefficient vectors; budget
// bounds the nodes visited.
func (b *builder) affineOf(id int32, n int, budget *int) (affine, bool) {
	*budget--
	if *budget < 0 {
		return affine{}, false
	}
	nd := *b.nd(id)
	if nd.cst {
		if nd.vector() {
			return affine{c0: nd.vec}, true
		}
		return affine{c0: fillVec(nd.val, n)}, true
	}
	if !nd.vector() {
		return affine{terms: []affTerm{{s: id, coef: fillVec(1, n)}}}, true
	}
	switch nd.op {
	case opAdd, opSub:
		x, ok := b.affineOf(nd.a, n, budget)
		if !ok {
			return affine{}, false
		}
		y, ok := b.affineOf(nd.b, n, budget)
		if !ok {
			return affine{}, false
		}
		if nd.op == opSub {
			y = y.scaled(-1, nil)
		}
		return x.plus(y), true
	case opNeg, opMulK, opDivK, opAddK, opSubKR:
		x, ok := b.affineOf(nd.a, n, budget)
		if !ok {
			return affine{}, false
		}
		switch nd.op {
		case opNeg:
			return x.scaled(-1, nil), true
		case opMulK:
			return x.scaled(nd.k, nil), true
		case opDivK:
			return x.scaled(1/nd.k, nil), true
		case opAddK:
			return x.plus(affine{c0: fillVec(nd.k, n)}), true
		}
		return x.scaled(-1, nil).plus(affine{c0: fillVec(nd.k, n)}), true
	case opMul, opDiv:
		p, q := b.nd(nd.a), b.nd(nd.b)
		switch {
		case q.cst:
			// x * c or x / c, c a constant scalar or vector.
			x, ok := b.affineOf(nd.a, n, budget)
			if !ok {
				return affine{}, false
			}
			cv := q.vec
			if !q.vector() {
				cv = fillVec(q.val, n)
			}
			if nd.op == opDiv {
				inv := make([]float64, n)
				for i, c := range cv {
					inv[i] = 1 / c
				}
				cv = inv
			}
			return x.scaled(1, cv), true
		case p.cst && nd.op == opMul:
			x, ok := b.affineOf(nd.b, n, budget)
			if !ok {
				return affine{}, false
			}
			cv := p.vec
			if !p.vector() {
				cv = fillVec(p.val, n)
			}
			return x.scaled(1, cv), true
		case !q.vector():
			// x * s or x / s with s a varying scalar: the terms' scalars
			// are multiplied (divided) by s.
			x, ok := b.affineOf(nd.a, n, budget)
			if !ok {
				return affine{}, false
			}
			return b.timesScalar(x, nd.b, nd.op == opDiv), true
		case !p.vector() && nd.op == opMul:
			x, ok := b.affineOf(nd.b, n, budget)
			if !ok {
				return affine{}, false
			}
			return b.timesScalar(x, nd.a, false), true
		}
	}
	return affine{}, false
}

// timesScalar multiplies (or divides) an affine expression by the scalar
// node s.
func (b *builder) timesScalar(x affine, s int32, div bool) affine {
	var out affine
	for _, t := range x.terms {
		var ns int32
		if div {
			ns = b.over(t.s, s)
		} else {
			ns = b.times(t.s, s)
		}
		out = out.plus(affine{terms: []affTerm{{s: ns, coef: t.coef}}})
	}
	if x.c0 != nil {
		one := s
		if div {
			one = b.over(b.constant(1), s)
		}
		out = out.plus(affine{terms: []affTerm{{s: one, coef: x.c0}}})
	}
	return out
}

// scaled returns x times k and, when c is not nil, times c elementwise.
func (x affine) scaled(k float64, c []float64) affine {
	sc := func(v []float64) []float64 {
		out := make([]float64, len(v))
		for i, e := range v {
			if c != nil {
				e *= c[i]
			}
			out[i] = e * k
		}
		return out
	}
	var out affine
	if x.c0 != nil {
		out.c0 = sc(x.c0)
	}
	for _, t := range x.terms {
		out.terms = append(out.terms, affTerm{s: t.s, coef: sc(t.coef)})
	}
	return out
}

// plus returns x + y, with the terms of one scalar node merged.
func (x affine) plus(y affine) affine {
	var out affine
	switch {
	case x.c0 == nil:
		out.c0 = y.c0
	case y.c0 == nil:
		out.c0 = x.c0
	default:
		out.c0 = make([]float64, len(x.c0))
		for i := range out.c0 {
			out.c0[i] = x.c0[i] + y.c0[i]
		}
	}
	out.terms = append(out.terms, x.terms...)
	for _, t := range y.terms {
		merged := false
		for j := range out.terms {
			if out.terms[j].s == t.s {
				sum := make([]float64, len(t.coef))
				for i := range sum {
					sum[i] = out.terms[j].coef[i] + t.coef[i]
				}
				out.terms[j] = affTerm{s: t.s, coef: sum}
				merged = true
				break
			}
		}
		if !merged {
			out.terms = append(out.terms, t)
		}
	}
	return out
}

func fillVec(v float64, n int) []float64 {
	out := make([]float64, n)
	for i := range out {
		out[i] = v
	}
	return out
}

func isFinite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }
