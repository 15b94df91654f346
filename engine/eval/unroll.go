package eval

import (
	"math"

	"bellcheck/engine/model"
)

// maxNodes bounds the expression graph. The front end bounds the unrolled
// model (model.MaxUnrolled); elementwise work on the vectors it yields adds
// to that, and this is the backstop (a variable so that tests can lower it).
var maxNodes int32 = 2 * model.MaxUnrolled

// tooLarge reports a graph over maxNodes.
func (b *builder) tooLarge() int32 {
	if b.err == nil {
		b.err = &Error{Pos: b.pos, Msg: "the model is too large once unrolled: use fewer steps or a shorter window", Err: ErrTooLarge}
	}
	return 0 // node 0 exists: the graph is full
}

// elem returns a scalar node for element i of v (v itself for a scalar):
// the pack's element, the constant's, or the elementwise operation built on
// its operands' elements.
func (b *builder) elem(v int32, i int) int32 {
	if b.err != nil {
		return v
	}
	x := b.nd(v)
	if !x.vector() {
		return v
	}
	switch {
	case x.cst:
		return b.constant(x.vec[i])
	case x.op == opPack:
		return x.elems[i]
	case x.op == opBinomLogit:
		// k log p + (n-k) log(1-p), p = logistic(eta), per element.
		eta := b.elem(x.a, i)
		k, nk := b.elem(x.b, i), b.elem(x.elems[0], i)
		return b.binomLogitNode(eta, b.un(opLogistic, eta, 0), k, nk)
	}
	switch ops[x.op].class {
	case classUnary:
		return b.un(x.op, b.elem(x.a, i), x.k)
	case classBinary:
		return b.bin(x.op, b.elem(x.a, i), b.elem(x.b, i), x.k)
	}
	return b.fail(ErrNotChecked, "cannot take an element of a %s vector", ops[x.op].name)
}

// statePack builds the pack of a block's state component (marked
// unrolled), and records its elements as state values (builder.states).
func (b *builder) statePack(elems []int32) int32 {
	if b.states == nil {
		b.states = map[int32]bool{}
	}
	for _, e := range elems {
		b.states[e] = true
	}
	return b.unrolledPack(elems)
}

// unrolledPack builds a pack marked unrolled.
func (b *builder) unrolledPack(elems []int32) int32 {
	if b.err != nil {
		return 0
	}

	id := b.pack(elems)
	if nd := b.nd(id); nd.op == opPack {
		nd.unrolled = true
	}
	return id
}

// unrolledUn builds a unary operation on an unrolled pack, element by element.
func (b *builder) unrolledUn(op opcode, a int32, k float64) int32 {
	n := b.nd(a).n
	out := make([]int32, n)
	for i := range out {
		out[i] = b.un(op, b.elem(a, i), k)
	}
	return b.unrolledPack(out)
}

// unrolledBin builds a binary operation with an unrolled pack, element by element.
func (b *builder) unrolledBin(op opcode, x, y int32, k float64) int32 {
	n := max(b.nd(x).n, b.nd(y).n)
	out := make([]int32, n)
	for i := range out {
		out[i] = b.bin(op, b.elem(x, i), b.elem(y, i), k)
		if b.err != nil {
			return 0
		}
	}
	return b.unrolledPack(out)
}

// unrolledReduce reduces an unrolled pack by a tree of binary operations
// (pairwise, so rounding grows with log n).
func (b *builder) unrolledReduce(op opcode, v int32) int32 {
	n := b.nd(v).n
	terms := make([]int32, n)
	for i := range terms {
		terms[i] = b.elem(v, i)
		if op == opSumSq {
			terms[i] = b.un(opSq, terms[i], 0)
		}
	}
	var join opcode
	switch op {
	case opSum, opSumSq:
		join = opAdd
	case opRMin:
		join = opMin
	case opRMax:
		join = opMax
	case opRLse:
		join = opLse
	default:
		return b.fail(ErrNotChecked, "cannot reduce by %s", ops[op].name)
	}
	for len(terms) > 1 && b.err == nil {
		next := terms[:0:0]
		for i := 0; i+1 < len(terms); i += 2 {
			next = append(next, b.bin(join, terms[i], terms[i+1], 0))
		}
		if len(terms)%2 == 1 {
			next = append(next, terms[len(terms)-1])
		}
		terms = next
	}
	return terms[0]
}

// index builds x[positions]: a scalar for a scalar position, an unrolled
// pack for a vector of positions. Positions count from 1 and must be
// constant; the front end has checked them.
func (b *builder) index(x, pos int32) int32 {
	if b.err != nil {
		return x
	}
	xn, pn := b.nd(x), b.nd(pos)
	if !pn.cst {
		return b.fail(ErrNotChecked, "an index is not constant")
	}
	at := func(p float64) (int, bool) {
		if p != math.Trunc(p) || p < 1 || p > float64(xn.n) {
			return 0, false
		}
		return int(p) - 1, true
	}
	if !pn.vector() {
		i, ok := at(pn.val)
		if !ok {
			return b.fail(ErrShape, "index %g outside 1 to %d", pn.val, xn.n)
		}
		return b.elem(x, i)
	}
	out := make([]int32, pn.n)
	for j, p := range pn.vec {
		i, ok := at(p)
		if !ok {
			return b.fail(ErrShape, "index %g outside 1 to %d", p, xn.n)
		}
		out[j] = b.elem(x, i)
	}
	if xn.cst {
		return b.pack(out) // all constant: a constant vector
	}
	return b.unrolledPack(out)
}

// slice builds x[lo:hi] (both ends included, counted from 1).
func (b *builder) slice(x, lo, hi int32) int32 {
	l, okL := b.scalarConst(lo)
	h, okH := b.scalarConst(hi)
	if b.err != nil {
		return x
	}
	if !okL || !okH || l != math.Trunc(l) || h != math.Trunc(h) || l < 1 || h > float64(b.nd(x).n) || l > h {
		return b.fail(ErrShape, "bad slice")
	}
	pos := make([]float64, int(h-l)+1)
	for i := range pos {
		pos[i] = l + float64(i)
	}
	return b.index(x, b.vconst(pos))
}
