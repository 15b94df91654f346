package eval

import "math"

// The flat block tape: block evaluation of models with short data vectors.
//
// Point by point, a model whose data vectors have a few dozen elements
// spends most of its time starting instructions. The flat tape instead
// evaluates a group of q points at once: its scalar stages compute each
// scalar node for the q points (a slot of q values), and its loop stages
// run a loop's kernel over the q*n pairs (point, element), with the data
// tiled q times; instructions that read scalars (which vary with the
// point) run point by point over each point's n pairs, the others over all
// q*n at once; each point's reductions then fold its own n consecutive
// values.
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
	kern     []kinstr
	n        int
	pscalars []int32 // point slots of the scalars the kernel reads
	base     int     // scalar operand of pscalars[0]
	runs     []flatRun
	reds     []reduction // src: a pair slot, dst: a point slot
}

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
			loopIn := map[int32]bool{}
			var stack []int32
			for _, r := range reds {
				stack = append(stack, nodes[r].a)
			}
			for len(stack) > 0 {
				id := stack[len(stack)-1]
				stack = stack[:len(stack)-1]
				nd := &nodes[id]
				if loopIn[id] || nd.cst || !nd.vector() {
					continue
				}
				loopIn[id] = true
				for _, arg := range [2]int32{nd.a, nd.b} {
					if arg >= 0 {
						stack = append(stack, arg)
					}
				}
			}
			order := sortedKeys(loopIn)
			pins := map[int32]int32{}
			pointScalar := map[int32]int32{}
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
					case !a.cst && !a.vector():
						if _, ok := pointScalar[arg]; ok {
							continue
						}
						src, ok := pointSlot(arg)
						if !ok {
							return nil // not scheduled before the loop (cannot happen)
						}
						pointScalar[arg] = pointScalarBase + int32(len(st.pscalars))
						st.pscalars = append(st.pscalars, src)
					}
				}
			}
			ks := &kernelSpace{
				nodes:    nodes,
				inKernel: func(id int32) bool { return loopIn[id] },
				isVec:    func(id int32) bool { return nodes[id].vector() },
				pinned:   func(id int32) (int32, bool) { s, ok := pins[id]; return s, ok },
				scalar: func(id int32) int32 {
					if k, ok := pointScalar[id]; ok {
						return k
					}
					return scalar(id)
				},
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
	for si := range ft.stages {
		ft.stages[si].segment(len(ft.consts))
	}
	return ft
}

// pointScalarBase marks, while a loop stage is built, a scalar operand that
// varies with the point: pointScalarBase + k is the stage's k-th.
const pointScalarBase = 1 << 24

// segment renumbers the point scalars of a loop stage after the constants
// (base), and splits its kernel into runs: runs without point scalars go
// over all pairs at once, runs with them point by point (each point's n
// elements with its scalars).
func (st *flatStage) segment(base int) {
	if st.n == 0 {
		return
	}
	remap := func(x *int32) bool {
		if *x >= pointScalarBase {
			*x = int32(base) + *x - pointScalarBase
			return true
		}
		return false
	}
	st.base = base
	var cur *flatRun
	for i := range st.kern {
		in := &st.kern[i]
		seg := false
		switch {
		case in.op == opLin || in.op == opQuad:
			if in.sa >= 0 && remap(&in.sa) {
				seg = true
			}
			if in.sb >= 0 && remap(&in.sb) {
				seg = true
			}
		case in.form == formVS:
			seg = remap(&in.b)
		case in.form == formSV:
			seg = remap(&in.a)
		}
		if cur == nil || cur.seg != seg {
			st.runs = append(st.runs, flatRun{lo: i, seg: seg})
			cur = &st.runs[len(st.runs)-1]
		}
		cur.hi = i + 1
		if seg {
			cur.slots = appendOnce(cur.slots, in.dst)
			switch {
			case in.op == opLin || in.op == opQuad:
				for _, x := range [2]int32{in.a, in.b} {
					if x >= 0 {
						cur.slots = appendOnce(cur.slots, x)
					}
				}
			case in.form == formVS:
				cur.slots = appendOnce(cur.slots, in.a)
			case in.form == formSV:
				cur.slots = appendOnce(cur.slots, in.b)
			}
		}
	}
}

func appendOnce(v []int32, x int32) []int32 {
	for _, y := range v {
		if y == x {
			return v
		}
	}
	return append(v, x)
}

// flatRun is a run of a loop stage's kernel: instructions lo to hi.
type flatRun struct {
	lo, hi int
	seg    bool    // with point scalars: point by point
	slots  []int32 // seg: the slots the run uses
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
	seg [][]float64 // one point's views of the slots
	ss  []float64   // scalar operands: the constants, then point scalars
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
	fs.seg = make([][]float64, len(ft.slotLen))
	np := 0
	for _, st := range ft.stages {
		np = max(np, len(st.pscalars))
	}
	fs.ss = make([]float64, len(ft.consts)+np)
	copy(fs.ss, ft.consts)
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
			for ri := range st.runs {
				run := &st.runs[ri]
				kern := st.kern[run.lo:run.hi]
				if !run.seg {
					runKernel(kern, vs, fs.ss, m*e, 0)
					continue
				}
				ss := fs.ss[st.base : st.base+len(st.pscalars)]
				for p := 0; p < m; p++ {
					for k, ps := range st.pscalars {
						ss[k] = vs[ps][p]
					}
					for _, x := range run.slots {
						fs.seg[x] = vs[x][p*e : (p+1)*e]
					}
					runKernel(kern, fs.seg, fs.ss, e, 0)
				}
			}
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
