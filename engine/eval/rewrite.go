package eval

// Algebraic rewrites that remove transcendental calls. Each is exact in real
// arithmetic and at least as accurate in floating point as the expression it
// replaces:
//
//	log(exp(x))          -> x               exp overflows above 709.8 and
//	                                        underflows below -745; x does not
//	log1p(expm1(x))      -> x               likewise
//	log(logistic(x))     -> -log1pexp(-x)   logistic rounds to 1 above 37
//	                                        (log gives 0, not -e^-x) and to 0
//	                                        below -745 (log gives -Inf, not x)
//	log(1 - logistic(x)) -> -log1pexp(x)    1 - logistic(x) cancels for x > 0
//	log1p(-logistic(x))  -> -log1pexp(x)    (relative error e^x eps)
//	xlogy(k, exp(x))     -> k*x             k log rate of a log-link rate
//	xlogy(k, logistic(x))     -> -k*log1pexp(-x)
//	xlog1py(k, -logistic(x))  -> -k*log1pexp(x)
//
// special.Log1pExp is accurate to a few ulps for every x. The products by k
// differ from xlogy's convention 0 log 0 = 0 only where x is infinite, which
// needs an infinite parameter. The family expansions (funcs.go) use the same
// facts to drop support guards that always pass (a rate exp(x) is >= 0, a
// probability logistic(x) is in [0, 1]), and ld_binomial of logistic(eta)
// over data becomes one opBinomLogit per element (one exp, one log1p).

// rewriteAlgebra turns the rewrites on (tests compare with it off).
var rewriteAlgebra = true

// rewriteUnary applies the rewrites of a unary operation on a.
func (b *builder) rewriteUnary(op opcode, a int32) (int32, bool) {
	x := *b.nd(a)
	switch op {
	case opLog:
		switch x.op {
		case opExp:
			return x.a, true
		case opLogistic:
			return b.un(opNeg, b.un(opLog1pExp, b.un(opNeg, x.a, 0), 0), 0), true
		case opSubKR:
			if y := b.nd(x.a); x.k == 1 && y.op == opLogistic {
				return b.un(opNeg, b.un(opLog1pExp, y.a, 0), 0), true
			}
		}
	case opLog1p:
		switch x.op {
		case opExpm1:
			return x.a, true
		case opNeg:
			if y := b.nd(x.a); y.op == opLogistic {
				return b.un(opNeg, b.un(opLog1pExp, y.a, 0), 0), true
			}
		}
	}
	return 0, false
}

// rewriteBinary applies the rewrites of a binary operation on x and y
// (neither is constant, or only one is).
func (b *builder) rewriteBinary(op opcode, x, y int32) (int32, bool) {
	ny := *b.nd(y)
	switch op {
	case opXlogy:
		switch ny.op {
		case opExp:
			return b.bin(opMul, x, ny.a, 0), true
		case opLogistic:
			l := b.un(opLog1pExp, b.un(opNeg, ny.a, 0), 0)
			return b.un(opNeg, b.bin(opMul, x, l, 0), 0), true
		}
	case opXlog1py:
		switch ny.op {
		case opExpm1:
			return b.bin(opMul, x, ny.a, 0), true
		case opNeg:
			if z := b.nd(ny.a); z.op == opLogistic {
				l := b.un(opLog1pExp, z.a, 0)
				return b.un(opNeg, b.bin(opMul, x, l, 0), 0), true
			}
		}
	case opMul:
		// c * (s * d) with c, d constant vectors and s a scalar: s * (c d),
		// one product per element instead of two (the same two roundings).
		for _, pr := range [2][2]int32{{x, y}, {y, x}} {
			c, other := pr[0], pr[1]
			if nc := b.nd(c); !nc.cst || !nc.vector() {
				continue
			}
			if s, d, ok := b.scaledData(other); ok {
				cv, dv := b.nd(c).vec, b.nd(d).vec
				prod := make([]float64, len(cv))
				for i := range prod {
					prod[i] = cv[i] * dv[i]
				}
				return b.bin(opMul, s, b.vconst(prod), 0), true
			}
		}
	}
	return 0, false
}

// scaledData reports whether id is s * d with s a varying scalar and d a
// constant vector.
func (b *builder) scaledData(id int32) (s, d int32, ok bool) {
	nd := b.nd(id)
	if nd.op != opMul {
		return 0, 0, false
	}
	p, q := b.nd(nd.a), b.nd(nd.b)
	switch {
	case !p.cst && !p.vector() && q.cst && q.vector():
		return nd.a, nd.b, true
	case !q.cst && !q.vector() && p.cst && p.vector():
		return nd.b, nd.a, true
	}
	return 0, 0, false
}

// provablyPasses reports whether the support guard op (t against k) passes
// for every value of t's argument but NaN: t is exp(x) (>= 0; > 0 where the
// caller's formula stays right when e^x underflows to 0) or logistic(x)
// (in [0, 1]). Where the argument is NaN the guarded value is NaN anyway in
// the families that ask (it is built from t's argument).
func (b *builder) provablyPasses(op opcode, t int32, k float64, strictOK bool) bool {
	if !rewriteAlgebra {
		return false
	}
	switch b.nd(t).op {
	case opExp:
		return op == opGuardGE && k <= 0 || op == opGuardGT && (k < 0 || k == 0 && strictOK)
	case opLogistic:
		return op == opGuardGE && k <= 0 || op == opGuardGT && k < 0 ||
			op == opGuardLE && k >= 1 || op == opGuardLT && k > 1
	}
	return false
}

// binomLogitNode builds k log(p) + nk log(1-p) for p = logistic(eta): one
// opBinomLogit per element where eta is a vector and the counts are
// constant, else the rewritten sum of two log1pexp terms.
func (b *builder) binomLogitNode(eta, p, k, nk int32) int32 {
	ne, nkk, nnk := b.nd(eta), b.nd(k), b.nd(nk)
	if ne.vector() && !ne.cst && !ne.unrolled && nkk.cst && nnk.cst {
		n := ne.n
		kv, nkv := b.constVec(k, n), b.constVec(nk, n)
		return b.add(node{op: opBinomLogit, a: eta, b: kv, elems: []int32{nkv}, n: n}, false)
	}
	return b.plus(b.bin(opXlogy, k, p, 0), b.bin(opXlog1py, nk, b.un(opNeg, p, 0), 0))
}

// constVec returns a constant node as a vector of n elements (a scalar
// filled in).
func (b *builder) constVec(id int32, n int) int32 {
	if b.nd(id).vector() {
		return id
	}
	return b.filled(b.nd(id).val, n)
}

// sumWeighted builds sum(c * x) for a constant vector c, distributed over
// the linear terms of x as sum does: sum(c * (s*t + u)) = s*sum(c*t) +
// sum(c*u), with the sums of data folded.
func (b *builder) sumWeighted(c, x int32) int32 {
	cn, xn := b.nd(c), b.nd(x)
	cv := cn.vec
	if !xn.vector() {
		return b.bin(opMul, x, b.constant(constSum(cv)), 0)
	}
	if xn.cst {
		prod := make([]float64, len(cv))
		for i := range prod {
			prod[i] = cv[i] * xn.vec[i]
		}
		return b.constant(constSum(prod))
	}
	nx := *xn
	part := func(id int32) int32 { return b.sumWeighted(c, id) }
	switch nx.op {
	case opNeg:
		return b.un(opNeg, part(nx.a), 0)
	case opMulK, opDivK:
		return b.un(nx.op, part(nx.a), nx.k)
	case opAddK:
		return b.un(opAddK, part(nx.a), nx.k*constSum(cv))
	case opSubKR:
		return b.un(opSubKR, part(nx.a), nx.k*constSum(cv))
	case opAdd, opSub:
		return b.bin(nx.op, part(nx.a), part(nx.b), 0)
	case opMul:
		for _, pr := range [2][2]int32{{nx.a, nx.b}, {nx.b, nx.a}} {
			s := b.nd(pr[0])
			switch {
			case !s.vector():
				return b.bin(opMul, pr[0], part(pr[1]), 0)
			case s.cst:
				prod := make([]float64, len(cv))
				for i := range prod {
					prod[i] = cv[i] * s.vec[i]
				}
				return b.sumWeighted(b.vconst(prod), pr[1])
			}
		}
	case opSq:
		if allNonNegative(cv) {
			if q, ok := b.quadForm(nx.a, cv); ok {
				return q
			}
		}
	}
	return b.reduce(opSum, b.bin(opMul, c, x, 0))
}
