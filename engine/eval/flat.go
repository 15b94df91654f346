package eval

import "math"

// The flat block tape: block evaluation of models with short data vectors.
//
// Point by point, a model whose data vectors have a few dozen elements
// spends most of its time starting instructions. The flat tape instead
// evaluates a group of q points at once: its scalar stages compute each
// scalar node for the q points (a slot of q values), and its loop stages
// run a loop's kernel over the q*n pairs (point, element), with the data
// tiled q times and the scalars each loop reads expanded to n copies per
// point; each point's reductions then fold its own n consecutive values.
// The stages run in the order of the scalar tape's levels.
//
// Every value is computed by the same operations as point by point, and the
// reductions add each point's n elements exactly as a loop of one chunk
// does (sum4 and sumSq4 over the n values; a fused sum adds the same
// values), so LogDensityBlock equals LogDensity bit for bit. That holds
// when every loop fits in one chunk (n <= chunkLen); longer loops, and
// loops over vectors of parameter expressions, keep the point-by-point path.

// flatTarget is about the number of (point, element) pairs of one pass.
const flatTarget = 1024

// flatTape is the flat block tape of a model with loops.
type flatTape struct {
	q       int     // points per pass
	slotLen []int   // length of each slot
	params  []int32 // each parameter's slot (views the caller's column)
	tiles   []tile  // slots holding data tiled q times
	consts  []float64
	stages  []flatStage
	// The result: a slot, or a parameter's column, or a constant.
	rootSlot  int32
	rootParam int
	rootConst float64
}

// flatStage is a scalar stage (n == 0), a kernel over q points, or a loop
// stage over q*n pairs.
type flatStage struct {
	kern   []kinstr
	n      int
	expand []expansion
	reds   []reduction // src: a pair slot, dst: a point slot
}

// expansion copies a point slot into a pair slot, n copies per point.
type expansion struct{ src, dst int32 }

// tile is a slot holding data tiled q times.
type tile struct {
	slot int32
	data []float64
}

// lowerFlat builds the flat tape, or returns nil where it does not apply.
func lowerFlat(nodes []node, reach []bool, root int32, dim int, avail []int, maxAvail int,
	loopKeys []loopKey, groups map[loopKey][]int32) *flatTape {
	maxN := 0
	for _, k := range loopKeys {
		if k.n > chunkLen {
			return nil
		}
		maxN = max(maxN, k.n)
	}
	for id := range nodes {
		if reach[id] && nodes[id].op == opPack {
			return nil
		}
	}
	ft := &flatTape{rootSlot: -1, rootParam: -1}
	ft.q = min(max(flatTarget/max(maxN, 1), 1), blockLen)
	q := ft.q
	rn := &nodes[root]
	switch {
	case rn.op == opParam:
		ft.rootParam = int(rn.k)
		return ft
	case rn.cst:
		ft.rootConst = rn.val
		return ft
	}
	newSlot := func(n int) int32 {
		ft.slotLen = append(ft.slotLen, n)
		return int32(len(ft.slotLen) - 1)
	}
	for k := 0; k < dim; k++ {
		ft.params = append(ft.params, newSlot(q))
	}
	konst := map[uint64]int32{}
	scalar := func(id int32) int32 {
		bits := math.Float64bits(nodes[id].val)
		if c, ok := konst[bits]; ok {
			return c
		}
		c := int32(len(ft.consts))
		ft.consts = append(ft.consts, nodes[id].val)
		konst[bits] = c
		return c
	}
	isScalarNode := func(id int32) bool {
		nd := &nodes[id]
		return !nd.cst && !nd.vector() && nd.op != opParam
	}
	// persistent holds the point slot of each scalar node computed so far.
	persistent := map[int32]int32{}
	pointSlot := func(id int32) (int32, bool) {
		if nodes[id].op == opParam {
			return ft.params[int(nodes[id].k)], true
		}
		s, ok := persistent[id]
		return s, ok
	}
	// Scalar nodes used outside their stage (by a later stage or a loop).
	outside := map[int32]bool{root: true}
	for id := range nodes {
		nd := &nodes[id]
		if !reach[id] || nd.cst {
			continue
		}
		for _, arg := range operands(nd) {
			if isScalarNode(arg) && (nd.vector() || avail[arg] != avail[id] || ops[nd.op].class == classReduce) {
				outside[arg] = true
			}
		}
	}
	loopsAt := map[int][]loopKey{}
	for _, k := range loopKeys {
		loopsAt[k.lvl] = append(loopsAt[k.lvl], k)
	}
	for lvl := 0; lvl <= maxAvail; lvl++ {
		// The scalar stage of this level.
		in := map[int32]bool{}
		for id := range nodes {
			if reach[id] && isScalarNode(int32(id)) && ops[nodes[id].op].class != classReduce && avail[id] == lvl {
				in[int32(id)] = true
			}
		}
		if len(in) > 0 {
			order := sortedKeys(in)
			var roots []int32
			for _, id := range order {
				if outside[id] {
					roots = append(roots, id)
				}
			}
			ks := &kernelSpace{
				nodes:     nodes,
				inKernel:  func(id int32) bool { return in[id] },
				isVec:     func(id int32) bool { return !nodes[id].cst },
				pinned:    pointSlot,
				scalar:    scalar,
				firstFree: len(ft.slotLen),
			}
			kern, n, rootSlots := ks.build(order, roots, fuseKernels)
			for len(ft.slotLen) < n {
				newSlot(q)
			}
			for i, r := range roots {
				persistent[r] = rootSlots[i]
			}
			ft.stages = append(ft.stages, flatStage{kern: kern})
		}
		// The loops of this level.
		for _, key := range loopsAt[lvl] {
			reds := groups[key]
			n := key.n
			loopIn := loopNodes(nodes, reds)
			order := sortedKeys(loopIn)
			pins := map[int32]int32{}
			st := flatStage{n: n}
			for _, id := range order {
				for _, arg := range operands(&nodes[id]) {
					if _, ok := pins[arg]; ok || loopIn[arg] {
						continue
					}
					a := &nodes[arg]
					switch {
					case a.cst && a.vector():
						s := newSlot(q * n)
						data := make([]float64, q*n)
						for p := 0; p < q; p++ {
							copy(data[p*n:(p+1)*n], a.vec)
						}
						ft.tiles = append(ft.tiles, tile{slot: s, data: data})
						pins[arg] = s
					case !a.cst:
						src, ok := pointSlot(arg)
						if !ok {
							return nil // not scheduled before the loop (cannot happen)
						}
						s := newSlot(q * n)
						st.expand = append(st.expand, expansion{src: src, dst: s})
						pins[arg] = s
					}
				}
			}
			ks := &kernelSpace{
				nodes:     nodes,
				inKernel:  func(id int32) bool { return loopIn[id] },
				isVec:     func(id int32) bool { return !nodes[id].cst || nodes[id].vector() },
				pinned:    func(id int32) (int32, bool) { s, ok := pins[id]; return s, ok },
				scalar:    scalar,
				firstFree: len(ft.slotLen),
			}
			roots := make([]int32, len(reds))
			for i, r := range reds {
				roots[i] = nodes[r].a
			}
			kern, ns, rootSlots := ks.build(order, roots, fuseKernels)
			for len(ft.slotLen) < ns {
				newSlot(q * n)
			}
			st.kern = kern
			for i, r := range reds {
				dst := newSlot(q)
				persistent[r] = dst
				st.reds = append(st.reds, reduction{op: nodes[r].op, src: rootSlots[i], dst: dst})
			}
			ft.stages = append(ft.stages, st)
		}
	}
	s, ok := persistent[root]
	if !ok {
		return nil
	}
	ft.rootSlot = s
	return ft
}

// operands returns a node's operand nodes.
func operands(nd *node) []int32 {
	var out []int32
	if nd.a >= 0 {
		out = append(out, nd.a)
	}
	if nd.b >= 0 {
		out = append(out, nd.b)
	}
	if nd.op == opBinomLogit {
		out = append(out, nd.elems...)
	}
	if nd.op == opPack {
		out = append(out, nd.elems...)
	}
	return out
}

// loopKey identifies a loop: its level and its vectors' length.
type loopKey struct{ lvl, n int }

// flatSpace is an evaluator's scratch space for the flat tape.
type flatSpace struct {
	vs  [][]float64
	lse lseState
}

func (fs *flatSpace) init(ft *flatTape) {
	total := 0
	for _, n := range ft.slotLen {
		total += n
	}
	buf := make([]float64, total)
	fs.vs = make([][]float64, len(ft.slotLen))
	off := 0
	for s, n := range ft.slotLen {
		fs.vs[s] = buf[off : off+n]
		off += n
	}
	for _, t := range ft.tiles {
		fs.vs[t.slot] = t.data
	}
}

// run evaluates the flat tape at the points of cols into out.
func (fs *flatSpace) run(ft *flatTape, cols [][]float64, out []float64) {
	n := len(out)
	switch {
	case ft.rootParam >= 0:
		copy(out, cols[ft.rootParam][:n])
		return
	case ft.rootSlot < 0:
		for i := range out {
			out[i] = ft.rootConst
		}
		return
	}
	vs := fs.vs
	for s := 0; s < n; s += ft.q {
		m := min(ft.q, n-s)
		for k, slot := range ft.params {
			vs[slot] = cols[k][s : s+m]
		}
		for si := range ft.stages {
			st := &ft.stages[si]
			if st.n == 0 {
				runKernel(st.kern, vs, ft.consts, m, 0)
				continue
			}
			e := st.n
			for _, ex := range st.expand {
				src, dst := vs[ex.src][:m], vs[ex.dst][:m*e]
				for p, v := range src {
					fillV(dst[p*e:(p+1)*e], v)
				}
			}
			runKernel(st.kern, vs, ft.consts, m*e, 0)
			for ri := range st.reds {
				fs.reduce(&st.reds[ri], m, e)
			}
		}
		copy(out[s:s+m], vs[ft.rootSlot][:m])
	}
}

// reduce folds each of m points' e consecutive values, as runLoop does for
// a loop of one chunk.
func (fs *flatSpace) reduce(red *reduction, m, e int) {
	src, dst := fs.vs[red.src][:m*e], fs.vs[red.dst][:m]
	for p := range dst {
		seg := src[p*e : (p+1)*e]
		switch red.op {
		case opSum:
			dst[p] = 0 + sum4(seg)
		case opSumSq:
			dst[p] = 0 + sumSq4(seg)
		case opRMin:
			acc := math.Inf(1)
			for _, x := range seg {
				acc = min(acc, x)
			}
			dst[p] = acc
		case opRMax:
			acc := math.Inf(-1)
			for _, x := range seg {
				acc = max(acc, x)
			}
			dst[p] = acc
		case opRLse:
			fs.lse.reset()
			fs.lse.add(seg)
			dst[p] = fs.lse.value()
		}
	}
}
