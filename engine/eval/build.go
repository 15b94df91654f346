package eval

import (
	"fmt"
	"math"

	"bellcheck/engine/model"
)

// node is one vertex of the expression graph the compiler builds from the
// model: an operation on earlier nodes, a parameter or a constant. Nodes are
// hash-consed, so equal sub-expressions (and every use of a definition) are
// one node, computed once.
type node struct {
	op    opcode
	a, b  int32   // operands, -1 when absent
	k     float64 // immediate operand; parameter number for opParam
	n     int     // vector length; 0 for a scalar
	cst   bool    // value known at compile time
	val   float64 // the constant scalar
	vec   []float64
	elems []int32 // opPack: one scalar node per element
	// unrolled marks a pack whose elements come from unrolling (a block's
	// states, indexing): operations on it are built element by element, so
	// the model stays scalar and evaluates on the block tape.
	unrolled bool
}

func (nd *node) vector() bool { return nd.n > 0 }

// key identifies a node for hash-consing.
type key struct {
	op   opcode
	a, b int32
	k    uint64
}

// builder builds the expression graph with constant folding and algebraic
// simplification. The first error is kept in err and later calls do little.
type builder struct {
	nodes []node
	memo  map[key]int32
	sums  map[int32]int32 // sum node of each vector summed so far
	err   error
	pos   model.Pos // of the expression being built, for messages
	// perElement keeps a sum over a vector of the parameters as one
	// reduction of its elements, not distributed over its terms nor folded
	// into sufficient statistics: SplitFactors then finds one factor per
	// data element (EP's sites), where the evaluator's rewrites would leave
	// a few factors of all the data each.
	perElement bool
	// states holds the nodes of a block's state values (the elements of
	// its components' packs): SplitFactors takes each as a whole, where
	// its sums are the trajectory's steps, not terms of the density.
	states map[int32]bool
}

func newBuilder() *builder {
	return &builder{memo: map[key]int32{}, sums: map[int32]int32{}}
}

func (b *builder) fail(err error, format string, args ...any) int32 {
	if b.err == nil {
		b.err = &Error{Pos: b.pos, Msg: fmt.Sprintf(format, args...), Err: err}
	}
	return b.constant(math.NaN())
}

func (b *builder) add(nd node, hashed bool) int32 {
	var kk key
	if hashed {
		kk = key{nd.op, nd.a, nd.b, math.Float64bits(nd.k)}
		if nd.op == opConst {
			kk.k = math.Float64bits(nd.val)
		}
		if id, ok := b.memo[kk]; ok {
			return id
		}
	}
	id := int32(len(b.nodes))
	if id >= maxNodes {
		return b.tooLarge()
	}
	b.nodes = append(b.nodes, nd)
	if hashed {
		b.memo[kk] = id
	}
	return id
}

func (b *builder) nd(id int32) *node { return &b.nodes[id] }

// constant returns the node of a constant scalar.
func (b *builder) constant(v float64) int32 {
	return b.add(node{op: opConst, a: -1, b: -1, cst: true, val: v}, true)
}

// vconst returns a node for a constant vector (not hash-consed).
func (b *builder) vconst(v []float64) int32 {
	return b.add(node{op: opConst, a: -1, b: -1, cst: true, n: len(v), vec: v}, false)
}

// filled returns a constant vector of n copies of v, or the scalar v when n == 0.
func (b *builder) filled(v float64, n int) int32 {
	if n == 0 {
		return b.constant(v)
	}
	vec := make([]float64, n)
	for i := range vec {
		vec[i] = v
	}
	return b.vconst(vec)
}

func (b *builder) param(i int) int32 {
	return b.add(node{op: opParam, a: -1, b: -1, k: float64(i)}, true)
}

func (b *builder) isConst(id int32, v float64) bool {
	nd := b.nd(id)
	return nd.cst && !nd.vector() && nd.val == v
}

func (b *builder) scalarConst(id int32) (float64, bool) {
	nd := b.nd(id)
	if nd.cst && !nd.vector() {
		return nd.val, true
	}
	return 0, false
}

// constAt returns element i of a constant node (the scalar for a scalar).
func (nd *node) constAt(i int) float64 {
	if nd.vector() {
		return nd.vec[i]
	}
	return nd.val
}

// un builds a unary operation with the immediate k.
func (b *builder) un(op opcode, a int32, k float64) int32 {
	if b.err != nil {
		return a
	}
	x := b.nd(a)
	if x.unrolled {
		return b.unrolledUn(op, a, k)
	}
	if x.cst {
		f := ops[op].value
		if !x.vector() {
			return b.constant(f(x.val, 0, k))
		}
		out := make([]float64, x.n)
		for i, v := range x.vec {
			out[i] = f(v, 0, k)
		}
		return b.vconst(out)
	}
	if rewriteAlgebra {
		if r, ok := b.rewriteUnary(op, a); ok {
			return r
		}
	}
	switch op {
	case opNeg:
		switch x.op {
		case opNeg:
			return x.a
		case opMulK:
			return b.un(opMulK, x.a, -x.k)
		case opDivK:
			return b.un(opDivK, x.a, -x.k)
		case opAddK: // -(a + k) = -k - a
			return b.un(opSubKR, x.a, -x.k)
		case opSubKR: // -(k - a) = a + -k
			return b.un(opAddK, x.a, -x.k)
		}
	case opSq, opAbs:
		if x.op == opNeg || (op == opSq && x.op == opAbs) {
			return b.un(op, x.a, 0)
		}
	case opAddK:
		if k == 0 {
			return a
		}
	case opMulK:
		switch {
		case k == 1:
			return a
		case k == -1:
			return b.un(opNeg, a, 0)
		case x.op == opNeg:
			return b.un(opMulK, x.a, -k)
		}
	case opDivK:
		switch {
		case k == 1:
			return a
		case k == -1:
			return b.un(opNeg, a, 0)
		case x.op == opNeg:
			return b.un(opDivK, x.a, -k)
		case exactReciprocal(k):
			return b.un(opMulK, a, 1/k)
		}
	case opDivKR:
		if k == 1 {
			return b.un(opRecip, a, 0)
		}
	case opPowK:
		return b.powK(a, k)
	}
	return b.add(node{op: op, a: a, b: -1, k: k, n: x.n}, true)
}

// exactReciprocal reports whether k is a power of two whose reciprocal is a
// normal number, so that a/k == a*(1/k) exactly for every a.
func exactReciprocal(k float64) bool {
	frac, exp := math.Frexp(k)
	return math.Abs(frac) == 0.5 && exp > -1020 && exp < 1020
}

// powK builds a^k for a constant k: small integer powers become
// multiplications, halves square roots.
func (b *builder) powK(a int32, k float64) int32 {
	n := b.nd(a).n
	switch k {
	case 0:
		return b.filled(1, n) // as math.Pow: x^0 = 1 for every x
	case 1:
		return a
	case 2:
		return b.un(opSq, a, 0)
	case 0.5:
		return b.un(opSqrt, a, 0)
	case -0.5:
		return b.un(opRecip, b.un(opSqrt, a, 0), 0)
	}
	if k == math.Trunc(k) && math.Abs(k) <= 16 {
		m := int(math.Abs(k))
		// Binary powering: a^m as squarings and products.
		var acc int32 = -1
		sq := a
		for {
			if m&1 == 1 {
				if acc < 0 {
					acc = sq
				} else {
					acc = b.bin(opMul, acc, sq, 0)
				}
			}
			m >>= 1
			if m == 0 {
				break
			}
			sq = b.un(opSq, sq, 0)
		}
		if k < 0 {
			return b.un(opRecip, acc, 0)
		}
		return acc
	}
	return b.add(node{op: opPowK, a: a, b: -1, k: k, n: n}, true)
}

// bin builds a binary operation, broadcasting a scalar against a vector.
func (b *builder) bin(op opcode, x, y int32, k float64) int32 {
	if b.err != nil {
		return x
	}
	nx, ny := b.nd(x), b.nd(y)
	n := max(nx.n, ny.n)
	if nx.vector() && ny.vector() && nx.n != ny.n {
		return b.fail(ErrShape, "vector lengths differ in %s: %d and %d elements", ops[op].name, nx.n, ny.n)
	}
	if nx.unrolled || ny.unrolled {
		return b.unrolledBin(op, x, y, k)
	}
	if nx.cst && ny.cst {
		f := ops[op].value
		if n == 0 {
			return b.constant(f(nx.val, ny.val, k))
		}
		out := make([]float64, n)
		for i := range out {
			out[i] = f(nx.constAt(i), ny.constAt(i), k)
		}
		return b.vconst(out)
	}
	if rewriteAlgebra {
		if r, ok := b.rewriteBinary(op, x, y); ok {
			return r
		}
	}
	cx, xk := b.scalarConst(x)
	cy, yk := b.scalarConst(y)
	switch op {
	case opAdd:
		switch {
		case xk:
			return b.un(opAddK, y, cx)
		case yk:
			return b.un(opAddK, x, cy)
		case ny.op == opNeg:
			return b.bin(opSub, x, ny.a, 0)
		case nx.op == opNeg:
			return b.bin(opSub, y, nx.a, 0)
		}
	case opSub:
		switch {
		case yk:
			return b.un(opAddK, x, -cy) // a - k == a + (-k) exactly
		case xk:
			return b.un(opSubKR, y, cx)
		case ny.op == opNeg:
			return b.bin(opAdd, x, ny.a, 0)
		}
	case opMul:
		switch {
		case xk:
			return b.un(opMulK, y, cx)
		case yk:
			return b.un(opMulK, x, cy)
		case x == y:
			return b.un(opSq, x, 0)
		}
	case opDiv:
		switch {
		case yk:
			return b.un(opDivK, x, cy)
		case xk:
			return b.un(opDivKR, y, cx)
		}
	case opPow:
		switch {
		case yk:
			return b.un(opPowK, x, cy)
		case xk:
			return b.un(opPowKR, y, cx)
		}
	case opGuardGT, opGuardGE, opGuardLT, opGuardLE:
		if ny.cst {
			// The test is known now: drop the guard where every element
			// passes; a scalar test that fails gives -Inf (or NaN) outright.
			all := true
			for i := 0; i < max(ny.n, 1); i++ {
				if !guardPass(op, ny.constAt(i), k) {
					all = false
					break
				}
			}
			if all {
				if ny.n > nx.n {
					return b.bin(opAdd, x, b.filled(0, ny.n), 0) // keep the shape
				}
				return x
			}
			if !ny.vector() {
				return b.filled(guard(op, 0, ny.val, k), n)
			}
		}
	}
	if (op == opAdd || op == opMul || op == opMin || op == opMax || op == opLse) && x > y {
		x, y = y, x // commutative: one node for a+b and b+a
	}
	return b.add(node{op: op, a: x, b: y, k: k, n: n}, true)
}

// pack builds a vector from scalar nodes.
func (b *builder) pack(elems []int32) int32 {
	all := true
	for _, e := range elems {
		if !b.nd(e).cst {
			all = false
		}
	}
	if all {
		v := make([]float64, len(elems))
		for i, e := range elems {
			v[i] = b.nd(e).val
		}
		return b.vconst(v)
	}
	return b.add(node{op: opPack, a: -1, b: -1, n: len(elems), elems: elems}, false)
}

// sum builds the sum of a vector's elements. Sums of linear combinations
// are distributed over their terms and scalar factors are taken out, so that
// sums of data become constants: sum(a*t + b) = a*sum(t) + n*b.
func (b *builder) sum(v int32) int32 {
	if b.err != nil {
		return v
	}
	x := b.nd(v)
	if !x.vector() {
		return v
	}
	if x.unrolled {
		return b.unrolledReduce(opSum, v)
	}
	if s, ok := b.sums[v]; ok {
		return s
	}
	s := b.sum1(v)
	b.sums[v] = s
	return s
}

func (b *builder) sum1(v int32) int32 {
	x := b.nd(v)
	n := float64(x.n)
	if x.cst {
		return b.constant(constSum(x.vec))
	}
	if b.perElement {
		return b.reduce(opSum, v)
	}
	// part is the sum of an operand of x: a vector's sum, or n times a scalar.
	part := func(id int32) int32 {
		if b.nd(id).vector() {
			return b.sum(id)
		}
		return b.un(opMulK, id, n)
	}
	switch x.op {
	case opNeg:
		return b.un(opNeg, b.sum(x.a), 0)
	case opMulK, opDivK:
		return b.un(x.op, b.sum(x.a), x.k)
	case opAddK, opSubKR:
		return b.un(x.op, b.sum(x.a), n*x.k)
	case opAdd, opSub:
		return b.bin(x.op, part(x.a), part(x.b), 0)
	case opMul:
		if !b.nd(x.a).vector() {
			return b.bin(opMul, x.a, b.sum(x.b), 0)
		}
		if !b.nd(x.b).vector() {
			return b.bin(opMul, b.sum(x.a), x.b, 0)
		}
		if rewriteAlgebra {
			// sum(c * x) with c data: distributed over x's linear terms.
			if b.nd(x.a).cst {
				return b.sumWeighted(x.a, x.b)
			}
			if b.nd(x.b).cst {
				return b.sumWeighted(x.b, x.a)
			}
		}
	case opDiv:
		if !b.nd(x.b).vector() {
			return b.bin(opDiv, b.sum(x.a), x.b, 0)
		}
		if d, q := b.nd(x.b), b.nd(x.a); d.cst && q.op == opSq && allPositive(d.vec) {
			// sum(a^2 / c) with data c > 0: a weighted sum of squares.
			w := make([]float64, len(d.vec))
			for i, c := range d.vec {
				w[i] = 1 / c
			}
			if f, ok := b.quadForm(q.a, w); ok {
				return f
			}
		}
		if d := b.nd(x.b); d.cst && !b.nd(x.a).vector() {
			// sum_i s / c_i = s * sum_i 1/c_i
			inv := make([]float64, len(d.vec))
			for i, c := range d.vec {
				inv[i] = 1 / c
			}
			return b.bin(opMul, x.a, b.constant(constSum(inv)), 0)
		}
	case opGuardGT, opGuardGE, opGuardLT, opGuardLE:
		if !b.nd(x.b).vector() {
			return b.bin(x.op, b.sum(x.a), x.b, x.k)
		}
	case opXlogy, opXlog1py:
		// sum_i c_i log(y) = (sum_i c_i) log(y) when every c_i >= 0 (and
		// then the sum is 0 exactly when every term is).
		if a := b.nd(x.a); a.cst && !b.nd(x.b).vector() && allNonNegative(a.vec) {
			return b.bin(x.op, b.constant(constSum(a.vec)), x.b, 0)
		}
	case opSq:
		if f, ok := b.quadForm(x.a, nil); ok {
			return f
		}
		return b.reduce(opSumSq, x.a)
	}
	return b.reduce(opSum, v)
}

// reduce builds a reduction node of a vector.
func (b *builder) reduce(op opcode, v int32) int32 {
	if b.nd(v).unrolled {
		return b.unrolledReduce(op, v)
	}
	return b.add(node{op: op, a: v, b: -1}, true)
}

func allPositive(v []float64) bool {
	for _, x := range v {
		if !(x > 0) {
			return false
		}
	}
	return true
}

func allNonNegative(v []float64) bool {
	for _, x := range v {
		if !(x >= 0) {
			return false
		}
	}
	return true
}

// constSum adds up constants with Neumaier's compensated summation, so
// folded data sums are as accurate as the data.
func constSum(v []float64) float64 {
	var s, c float64
	for _, x := range v {
		t := s + x
		if math.Abs(s) >= math.Abs(x) {
			c += (s - t) + x
		} else {
			c += (x - t) + s
		}
		s = t
	}
	if math.IsInf(s, 0) || s != s {
		return s
	}
	return s + c
}
