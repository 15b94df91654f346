package eval

import (
	"slices"
	"sort"
)

// Kernels: the elementwise part of the tape, over slots. A kernel is built
// from graph nodes in two steps: kernel operations (kops), where value-mode
// kernels fuse a few common patterns into one pass over the data, then slots
// with reuse.
//
// The fused operations compute exactly what the unfused ones would (the
// products are rounded before they are added, so no fused multiply-add can
// creep in):
//
//	opLin:  (a + c) + s*b   from a ± s*b, (a + c) ± s*b, (a ± s') ± s*b,
//	                        c + s*b, with s*b a product by a scalar or a
//	                        constant, and s*b^2 likewise (flagSqB), and
//	                        s*(b + e)^2 with e a constant (flagShiftB)
//	opQuad: (a + c)^2 * k   from (a + c)^2, (a + c)^2 * k, (a + c)^2 / k,
//	                        a^2 * k, a^2 / k
//	opGuards: a chain of support guards on vectors, guard(guard(a, t1), t2)...
//
// An absorbed operation is computed again inside the fused one; it stays in
// the kernel only if something else uses it.

// kop is a kernel operation before slots are assigned: operands are nodes.
type kop struct {
	op     opcode
	flags  uint8
	out    int32
	a, b   int32 // operand nodes (vector or, for base operations, scalar)
	sa, sb int32 // fused: scalar operand nodes, -1 for the immediates
	k, k2  float64
	k3     float64 // opLin with flagShiftB
	elems  []int32
	tests  []guardTest // opGuards: t is a node
}

// operands appends the vector and scalar operand nodes of a kernel
// operation that are read through a, b and the guard tests.
func (op *kop) operands(buf []int32) []int32 {
	for _, x := range [2]int32{op.a, op.b} {
		if x >= 0 {
			buf = append(buf, x)
		}
	}
	for _, g := range op.tests {
		buf = append(buf, g.t)
	}
	return buf
}

// kernelSpace says how the graph's nodes appear in a kernel.
type kernelSpace struct {
	nodes []node
	// inKernel: computed by the kernel.
	inKernel func(id int32) bool
	// isVec: an operand with one value per element (computed, pinned data
	// or, in the block tape, a parameter); other operands are scalars.
	isVec func(id int32) bool
	// pinned: the slot of an operand whose slot views outside data.
	pinned func(id int32) (int32, bool)
	// scalar: the index of a scalar operand.
	scalar func(id int32) int32
	// firstFree: the first slot the kernel may allocate.
	firstFree int
}

// build makes a kernel computing roots (read after the kernel) from the
// kernel nodes in order (topological). It returns the instructions, the
// number of slots and each root's slot.
func (ks *kernelSpace) build(order []int32, roots []int32, fuse bool) ([]kinstr, int, []int32) {
	nodes := ks.nodes
	kops := make(map[int32]*kop, len(order))
	for _, id := range order {
		nd := &nodes[id]
		op := &kop{op: nd.op, out: id, a: nd.a, b: nd.b, sa: -1, sb: -1, k: nd.k, elems: nd.elems}
		if fuse {
			ks.fuse(op)
		}
		kops[id] = op
	}
	// Keep what the roots need.
	needed := map[int32]bool{}
	var stack []int32
	stack = append(stack, roots...)
	for len(stack) > 0 {
		id := stack[len(stack)-1]
		stack = stack[:len(stack)-1]
		if needed[id] || !ks.inKernel(id) {
			continue
		}
		needed[id] = true
		stack = kops[id].operands(stack)
	}
	var live []*kop
	for _, id := range order {
		if needed[id] {
			live = append(live, kops[id])
		}
	}
	lastUse := map[int32]int{}
	var buf []int32
	for i, op := range live {
		buf = op.operands(buf[:0])
		for _, x := range buf {
			lastUse[x] = i
		}
	}
	for _, r := range roots {
		lastUse[r] = len(live)
	}
	alloc := slotAllocator{n: ks.firstFree}
	slot := map[int32]int32{}
	vslot := func(x int32) int32 {
		if s, ok := ks.pinned(x); ok {
			return s
		}
		return slot[x]
	}
	kern := make([]kinstr, 0, len(live))
	for i, op := range live {
		ki := kinstr{op: op.op, flags: op.flags, k: op.k, k2: op.k2, k3: op.k3, a: -1, b: -1, sa: -1, sb: -1}
		switch {
		case op.op == opLin || op.op == opQuad:
			if op.a >= 0 {
				ki.a = vslot(op.a)
			}
			if op.b >= 0 {
				ki.b = vslot(op.b)
			}
			if op.sa >= 0 {
				ki.sa = ks.scalar(op.sa)
			}
			if op.sb >= 0 {
				ki.sb = ks.scalar(op.sb)
			}
		case op.op == opGuards:
			ki.a = vslot(op.a)
			ki.tests = make([]guardTest, len(op.tests))
			for j, g := range op.tests {
				ki.tests[j] = guardTest{op: g.op, t: vslot(g.t), k: g.k}
			}
		case op.op == opBinomLogit:
			ki.form = formVVV
			ki.a, ki.b, ki.c = vslot(op.a), vslot(op.b), vslot(op.elems[0])
		case op.op == opPack:
			ki.form = formPack
			ki.elems = make([]int32, len(op.elems))
			for j, e := range op.elems {
				ki.elems[j] = ks.scalar(e)
			}
		case op.b < 0:
			ki.form = formV
			ki.a = vslot(op.a)
		default:
			va, vb := ks.isVec(op.a), ks.isVec(op.b)
			switch {
			case va && vb:
				ki.form = formVV
				ki.a, ki.b = vslot(op.a), vslot(op.b)
			case va:
				ki.form = formVS
				ki.a, ki.b = vslot(op.a), ks.scalar(op.b)
			default:
				ki.form = formSV
				ki.a, ki.b = ks.scalar(op.a), vslot(op.b)
			}
		}
		if op.op == opGuards && needed[op.a] && lastUse[op.a] == i {
			// The chain's input, computed in this kernel, ends here: the
			// chain runs in place, and where every test holds (a grid
			// inside the support) it writes nothing. (An input from
			// outside the kernel may be read after it.)
			ki.dst = slot[op.a]
			lastUse[op.a] = -1
		} else {
			ki.dst = alloc.get()
		}
		slot[op.out] = ki.dst
		buf = op.operands(buf[:0])
		for _, x := range buf {
			if lastUse[x] == i && needed[x] {
				alloc.free = append(alloc.free, slot[x])
				lastUse[x] = -1 // free once when an operand comes twice
			}
		}
		kern = append(kern, ki)
	}
	rootSlots := make([]int32, len(roots))
	for i, r := range roots {
		rootSlots[i] = vslot(r)
	}
	return kern, alloc.n, rootSlots
}

// fuseReductions moves an opLin whose only use is one sum or sum of
// squares into that reduction (no store and second pass over the chunk).
func fuseReductions(kern []kinstr, reds []reduction) ([]kinstr, []reduction) {
	for ri := range reds {
		red := &reds[ri]
		if red.op != opSum && red.op != opSumSq {
			continue
		}
		// The instruction that last writes the source slot.
		at := -1
		for i := range kern {
			if kern[i].dst == red.src {
				at = i
			}
		}
		if at < 0 || kern[at].op != opLin || kern[at].flags&flagSqB != 0 {
			continue
		}
		used := false
		for i := at + 1; i < len(kern); i++ {
			in := &kern[i]
			reads := in.form == formVV && (in.a == red.src || in.b == red.src) ||
				in.form == formV && in.a == red.src || in.form == formVS && in.a == red.src ||
				in.form == formSV && in.b == red.src ||
				in.form == formVVV && (in.a == red.src || in.b == red.src || in.c == red.src) ||
				(in.op == opLin || in.op == opQuad) && (in.a == red.src || in.b == red.src) ||
				in.op == opGuards && guardsRead(in, red.src)
			if reads || in.dst == red.src {
				used = true
			}
		}
		for rj := range reds {
			if rj != ri && reds[rj].src == red.src {
				used = true
			}
		}
		if used {
			continue
		}
		in := kern[at]
		red.fused = &in
		kern = append(kern[:at:at], kern[at+1:]...)
	}
	return kern, reds
}

// guardsRead reports whether an opGuards reads slot s.
func guardsRead(in *kinstr, s int32) bool {
	if in.a == s {
		return true
	}
	for _, g := range in.tests {
		if g.t == s {
			return true
		}
	}
	return false
}

// fuse rewrites a kernel operation into a fused one where a pattern fits.
func (ks *kernelSpace) fuse(op *kop) {
	nodes := ks.nodes
	nd := &nodes[op.out]
	switch nd.op {
	case opGuardGT, opGuardGE, opGuardLT, opGuardLE:
		// A guard of a guard (of a guard ...) of vectors: one pass.
		var tests []guardTest
		v := op.out
		for isGuard(nodes[v].op) && ks.isVec(nodes[v].a) && ks.isVec(nodes[v].b) && (v == op.out || ks.inKernel(v)) {
			tests = append(tests, guardTest{op: nodes[v].op, t: nodes[v].b, k: nodes[v].k})
			v = nodes[v].a
		}
		if len(tests) < 2 {
			return
		}
		slices.Reverse(tests)
		*op = kop{op: opGuards, out: op.out, a: v, b: -1, sa: -1, sb: -1, tests: tests}
	case opAdd, opSub:
		// P ± Q with Q a product: (a + c) ± s*b.
		type arrangement struct{ p, q int32 }
		arr := []arrangement{{nd.a, nd.b}}
		if nd.op == opAdd {
			arr = append(arr, arrangement{nd.b, nd.a})
		}
		for _, ar := range arr {
			b, sNode, s, sq, ok := ks.product(ar.q)
			if !ok {
				continue
			}
			f := &kop{op: opLin, out: op.out, a: -1, b: b, sa: -1, sb: sNode, k2: s}
			if sq {
				f.flags |= flagSqB
				if bn := &nodes[b]; ks.inKernel(b) && bn.op == opAddK && ks.isVec(bn.a) {
					// s*(x + e)^2: the shift is computed inside too.
					f.b, f.k3 = bn.a, bn.k
					f.flags |= flagShiftB
				}
			}
			if nd.op == opSub {
				if sNode >= 0 {
					f.flags |= flagNegS
				} else {
					f.k2 = -s
				}
			}
			if !ks.additive(ar.p, f) {
				continue
			}
			*op = *f
			return
		}
	case opSq, opMulK, opDivK:
		// (a + c)^2, possibly times or over k.
		t := op.out
		f := &kop{op: opQuad, out: op.out, a: -1, b: -1, sa: -1, sb: -1, k2: 1, flags: flagNoK}
		if nd.op != opSq {
			if nodes[nd.a].op != opSq || !ks.inKernel(nd.a) {
				return
			}
			t = nd.a
			f.k2 = nd.k
			f.flags = 0
			if nd.op == opDivK {
				f.flags = flagDiv
			}
		}
		x := nodes[t].a // the squared operand
		if !ks.isVec(x) {
			return
		}
		g := &kop{a: -1, sa: -1}
		if !ks.inKernel(x) || !ks.additive(x, g) || g.a < 0 {
			if nd.op == opSq {
				return // a plain square stays a square
			}
			g = &kop{a: x, sa: -1, flags: flagNoC}
		}
		if nd.op == opSq && g.flags&flagNoC != 0 {
			return // a plain square stays a square
		}
		f.a, f.sa, f.k = g.a, g.sa, g.k
		f.flags |= g.flags & (flagNoC | flagNegC)
		*op = *f
	}
}

// product reports whether q is s*b (s a scalar node or the constant s, b a
// vector), or s*b^2.
func (ks *kernelSpace) product(q int32) (b, sNode int32, s float64, sq, ok bool) {
	nodes := ks.nodes
	if !ks.inKernel(q) {
		return
	}
	qn := &nodes[q]
	square := func(x int32) (int32, bool) {
		if ks.inKernel(x) && nodes[x].op == opSq && ks.isVec(nodes[x].a) {
			return nodes[x].a, true
		}
		return x, false
	}
	switch qn.op {
	case opMulK:
		if !ks.isVec(qn.a) {
			return
		}
		b, sq = square(qn.a)
		return b, -1, qn.k, sq, true
	case opMul:
		switch {
		case ks.isVec(qn.a) && !ks.isVec(qn.b):
			b, sq = square(qn.a)
			return b, qn.b, 0, sq, true
		case !ks.isVec(qn.a) && ks.isVec(qn.b):
			b, sq = square(qn.b)
			return b, qn.a, 0, sq, true
		}
	}
	return
}

// additive sets the a and c parts of a fused operation from p: a vector
// (a = p), a vector plus a constant or a scalar, or a scalar alone.
func (ks *kernelSpace) additive(p int32, f *kop) bool {
	nodes := ks.nodes
	if !ks.isVec(p) {
		f.flags |= flagNoA
		f.sa = p
		return true
	}
	if ks.inKernel(p) {
		pn := &nodes[p]
		switch pn.op {
		case opAddK:
			if ks.isVec(pn.a) {
				f.a, f.k = pn.a, pn.k
				return true
			}
		case opAdd, opSub:
			switch {
			case ks.isVec(pn.a) && !ks.isVec(pn.b):
				f.a, f.sa = pn.a, pn.b
				if pn.op == opSub {
					f.flags |= flagNegC
				}
				return true
			case pn.op == opAdd && !ks.isVec(pn.a) && ks.isVec(pn.b):
				f.a, f.sa = pn.b, pn.a
				return true
			}
		}
	}
	f.a = p
	f.flags |= flagNoC
	return true
}

// sortedKeys returns the keys of a set in increasing order.
func sortedKeys(set map[int32]bool) []int32 {
	out := make([]int32, 0, len(set))
	for id := range set {
		out = append(out, id)
	}
	sort.Slice(out, func(i, j int) bool { return out[i] < out[j] })
	return out
}
