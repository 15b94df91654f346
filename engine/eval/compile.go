package eval

import (
	"math"
	"sort"

	"bellcheck/engine/model"
)

// buildDensity checks that m is a checked model of 1 to 4 parameters and
// builds its log-density (as written: a cost is not yet negated) into a new
// compiler's graph, returning the compiler and the density's node.
func buildDensity(m *model.Model, perElement bool) (*compiler, int32, error) {
	if m == nil || m.Density == nil {
		return nil, 0, &Error{Msg: "model has no density statement", Err: ErrNotChecked}
	}
	if dim := len(m.Params); dim < 1 || dim > model.MaxParams {
		return nil, 0, &Error{Msg: "a model needs 1 to 4 parameters", Err: ErrTooManyParams}
	}
	b0 := newBuilder()
	b0.perElement = perElement
	c := &compiler{m: m, b: b0, defs: make([]int32, len(m.Defs)), state: make([]uint8, len(m.Defs)),
		blocks: map[*model.BlockStmt][]int32{}}
	root := c.expr(m.Density)
	b := c.b
	if b.err == nil && b.nd(root).vector() {
		b.pos = m.Density.Pos()
		b.fail(ErrShape, "the density must be a scalar, but this is a vector of %d elements", b.nd(root).n)
	}
	if b.err != nil {
		return nil, 0, b.err
	}
	return c, root, nil
}

// Compile compiles a checked model (from model.Parse) to an evaluator of its
// log-density. For a model given as a cost the evaluator negates it, so it
// always returns the log-density. Where a parameter has a support [lo, hi]
// the log-density is -Inf outside it.
func Compile(m *model.Model) (*Evaluator, error) {
	c, root, err := buildDensity(m, false)
	if err != nil {
		return nil, err
	}
	b := c.b
	dim := len(m.Params)
	if m.Form == model.Cost {
		root = b.un(opNeg, root, 0)
	}
	for i, p := range m.Params {
		if p.Lo > math.Inf(-1) {
			root = b.guard(opGuardGE, root, b.param(i), p.Lo)
		}
		if p.Hi < math.Inf(1) {
			root = b.guard(opGuardLE, root, b.param(i), p.Hi)
		}
	}
	if b.err != nil {
		return nil, b.err
	}
	prog := lower(b, root, dim)
	return newEvaluator(prog, m), nil
}

// flatBlocks turns the flat block tape on (tests compare with it off).
var flatBlocks = true

// fuseKernels turns the fusion of kernel operations on (tests compare with
// it off).
var fuseKernels = true

// compiler turns the model's syntax tree into the expression graph.
type compiler struct {
	m     *model.Model
	b     *builder
	defs  []int32 // node of each definition once built
	state []uint8 // 0 not built, 1 building, 2 built
	// frame holds the nodes of the local names (model.LocalRef) of the
	// function body or block being expanded.
	frame  []int32
	blocks map[*model.BlockStmt][]int32 // each block's components, once unrolled
	depth  int                          // nesting of function expansions
}

func (c *compiler) expr(e model.Expr) int32 {
	b := c.b
	if b.err != nil {
		return 0
	}
	if e == nil {
		return b.fail(ErrNotChecked, "missing expression")
	}
	b.pos = e.Pos()
	switch e := e.(type) {
	case *model.Number:
		return b.constant(e.Value)
	case *model.Ident:
		switch e.Kind {
		case model.ParamRef:
			if e.Index < 0 || e.Index >= len(c.m.Params) {
				return b.fail(ErrNotChecked, "parameter %s has no index", e.Name)
			}
			return b.param(e.Index)
		case model.DefRef:
			return c.def(e)
		case model.LocalRef:
			if e.Index < 0 || e.Index >= len(c.frame) {
				return b.fail(ErrNotChecked, "local name %s has no slot", e.Name)
			}
			return c.frame[e.Index]
		}
		return b.fail(ErrNotChecked, "name %s is not resolved", e.Name)
	case *model.Unary:
		x := c.expr(e.X)
		switch e.Op {
		case '-':
			return b.un(opNeg, x, 0)
		case '+':
			return x
		}
		b.pos = e.At
		return b.fail(ErrNotChecked, "unknown operator %q", e.Op)
	case *model.Binary:
		x := c.expr(e.X)
		y := c.expr(e.Y)
		b.pos = e.At
		switch e.Op {
		case '+':
			return b.bin(opAdd, x, y, 0)
		case '-':
			return b.bin(opSub, x, y, 0)
		case '*':
			return b.bin(opMul, x, y, 0)
		case '/':
			return b.bin(opDiv, x, y, 0)
		case '^':
			return b.bin(opPow, x, y, 0)
		}
		return b.fail(ErrNotChecked, "unknown operator %q", e.Op)
	case *model.Index:
		return c.index(e)
	case *model.Call:
		if e.User != nil {
			return c.userCall(e)
		}
		info, known := model.Funcs[e.Name]
		impl, ok := impls[e.Name]
		if !known || !ok {
			return b.fail(ErrUnknownFunction, "unknown function %s", e.Name)
		}
		n := len(e.Args)
		if n < info.MinArgs || (info.MaxArgs != model.Variadic && n > info.MaxArgs) {
			return b.fail(ErrArity, "%s takes %d to %d arguments, got %d", e.Name, info.MinArgs, info.MaxArgs, n)
		}
		args := make([]int32, n)
		for i, a := range e.Args {
			args[i] = c.expr(a)
		}
		b.pos = e.At
		if b.err != nil {
			return 0
		}
		return impl(b, args)
	case *model.Vector:
		elems := make([]int32, len(e.Elems))
		for i, x := range e.Elems {
			elems[i] = c.expr(x)
			if b.err == nil && b.nd(elems[i]).vector() {
				b.pos = x.Pos()
				return b.fail(ErrShape, "element %d of a vector is a vector", i+1)
			}
		}
		if len(elems) > model.MaxVectorLen {
			b.pos = e.At
			return b.fail(ErrShape, "vector of %d elements, more than %d", len(elems), model.MaxVectorLen)
		}
		if len(elems) == 0 {
			b.pos = e.At
			return b.fail(ErrShape, "empty vector")
		}
		return b.pack(elems)
	}
	return b.fail(ErrNotChecked, "unknown expression %T", e)
}

func (c *compiler) def(e *model.Ident) int32 {
	b := c.b
	i := e.Index
	if i < 0 || i >= len(c.m.Defs) {
		return b.fail(ErrNotChecked, "definition %s has no index", e.Name)
	}
	switch c.state[i] {
	case 2:
		return c.defs[i]
	case 1:
		return b.fail(ErrNotChecked, "definition %s refers to itself", e.Name)
	}
	c.state[i] = 1
	frame := c.frame
	c.frame = nil // a definition sees no local names
	var v int32
	if d := c.m.Defs[i]; d.Block != nil {
		v = c.component(d)
	} else {
		v = c.expr(d.Value)
	}
	c.frame = frame
	c.state[i] = 2
	c.defs[i] = v
	return v
}

// lower schedules the graph below root into a program: scalar registers,
// loops over data vectors, and a block tape when there are no loops.
func lower(b *builder, root int32, dim int) *program {
	nodes := b.nodes
	// Reachable nodes.
	reach := make([]bool, len(nodes))
	stack := []int32{root}
	for len(stack) > 0 {
		id := stack[len(stack)-1]
		stack = stack[:len(stack)-1]
		if reach[id] {
			continue
		}
		reach[id] = true
		nd := &nodes[id]
		if nd.a >= 0 {
			stack = append(stack, nd.a)
		}
		if nd.b >= 0 {
			stack = append(stack, nd.b)
		}
		stack = append(stack, nd.elems...)
	}

	p := &program{dim: dim}
	reg := make([]int32, len(nodes))
	for i := range reg {
		reg[i] = -1
	}
	p.nregs = dim
	p.init = make([]float64, dim)
	p.isVar = make([]bool, dim)
	for i := range p.isVar {
		p.isVar[i] = true
	}
	for id, nd := range nodes {
		if reach[id] && nd.op == opParam {
			reg[id] = int32(nd.k)
		}
	}
	for id, nd := range nodes {
		if reach[id] && nd.cst && !nd.vector() {
			reg[id] = int32(p.nregs)
			p.nregs++
			p.init = append(p.init, nd.val)
			p.isVar = append(p.isVar, false)
		}
	}
	for id, nd := range nodes {
		if reach[id] && !nd.cst && !nd.vector() && nd.op != opParam {
			reg[id] = int32(p.nregs)
			p.nregs++
			p.init = append(p.init, 0)
			p.isVar = append(p.isVar, true)
		}
	}
	p.root = reg[root]

	// Levels: avail[id] for a scalar is the number of loops that must run
	// before it is known; lvl[id] for a vector is the first loop that can
	// compute it.
	avail := make([]int, len(nodes))
	maxLvl, maxAvail := 0, 0
	for id := range nodes {
		nd := &nodes[id]
		if !reach[id] || nd.cst || nd.op == opParam {
			continue
		}
		l := 0
		for _, arg := range [2]int32{nd.a, nd.b} {
			if arg >= 0 {
				l = max(l, avail[arg])
			}
		}
		for _, e := range nd.elems {
			l = max(l, avail[e])
		}
		if ops[nd.op].class == classReduce {
			maxLvl = max(maxLvl, l)
			l++
		}
		avail[id] = l
		maxAvail = max(maxAvail, l)
	}

	// Loops: reductions grouped by level and length.
	groups := map[loopKey][]int32{}
	var keys []loopKey
	for id := range nodes {
		nd := &nodes[id]
		if reach[id] && ops[nd.op].class == classReduce {
			k := loopKey{avail[nd.a], nodes[nd.a].n}
			if _, ok := groups[k]; !ok {
				keys = append(keys, k)
			}
			groups[k] = append(groups[k], int32(id))
		}
	}
	sort.Slice(keys, func(i, j int) bool {
		if keys[i].lvl != keys[j].lvl {
			return keys[i].lvl < keys[j].lvl
		}
		return keys[i].n < keys[j].n
	})
	loopsAt := make([][]int, maxLvl+1)
	for _, k := range keys {
		p.loops = append(p.loops, lowerLoop(nodes, reg, groups[k], k.n))
		loopsAt[k.lvl] = append(loopsAt[k.lvl], len(p.loops)-1)
		last := &p.loops[len(p.loops)-1]
		p.maxSlots = max(p.maxSlots, last.nslots, last.jnslots)
	}

	// The scalar tape, level by level.
	for lvl := 0; lvl <= maxAvail; lvl++ {
		for id := range nodes {
			nd := &nodes[id]
			if !reach[id] || nd.cst || nd.vector() || nd.op == opParam || ops[nd.op].class == classReduce || avail[id] != lvl {
				continue
			}
			in := instr{op: nd.op, dst: reg[id], a: reg[nd.a], k: nd.k}
			if nd.b >= 0 {
				in.b = reg[nd.b]
			} else {
				in.b = in.a
			}
			p.code = append(p.code, in)
		}
		if lvl > maxLvl {
			continue
		}
		for _, li := range loopsAt[lvl] {
			p.code = append(p.code, instr{op: opLoop, a: int32(li)})
		}
	}
	if len(p.loops) == 0 {
		p.block = lowerBlock(nodes, reach, root, dim)
	} else if flatBlocks {
		p.flat = lowerFlat(nodes, reach, root, dim, avail, maxAvail, keys, groups)
	}
	return p
}

// slotAllocator hands out kernel slots, reusing those whose value is dead.
type slotAllocator struct {
	n    int
	free []int32
}

func (s *slotAllocator) get() int32 {
	if k := len(s.free); k > 0 {
		slot := s.free[k-1]
		s.free = s.free[:k-1]
		return slot
	}
	s.n++
	return int32(s.n - 1)
}

// loopNodes returns the nodes a loop computes: the computed (non-constant)
// vectors reachable from the reductions' operands through computed vectors.
func loopNodes(nodes []node, reds []int32) map[int32]bool {
	in := map[int32]bool{}
	var stack []int32
	for _, r := range reds {
		stack = append(stack, nodes[r].a)
	}
	for len(stack) > 0 {
		id := stack[len(stack)-1]
		stack = stack[:len(stack)-1]
		nd := &nodes[id]
		if in[id] || nd.cst || !nd.vector() {
			continue
		}
		in[id] = true
		for _, arg := range [2]int32{nd.a, nd.b} {
			if arg >= 0 {
				stack = append(stack, arg)
			}
		}
	}
	return in
}

// lowerLoop builds the kernels that compute the vector operands of the
// given reductions (all of length n): fused for value mode, plain for
// derivative mode.
func lowerLoop(nodes []node, reg []int32, reds []int32, n int) loop {
	in := loopNodes(nodes, reds)
	order := sortedKeys(in)
	roots := make([]int32, len(reds))
	for i, r := range reds {
		roots[i] = nodes[r].a
	}
	var lp loop
	lp.n = n
	for _, fused := range []bool{true, false} {
		// Constant vectors get pinned slots that view the data.
		pins := map[int32]int32{}
		var pinList []pin
		for _, id := range order {
			nd := &nodes[id]
			args := []int32{nd.a, nd.b}
			if nd.op == opBinomLogit {
				args = append(args, nd.elems...)
			}
			for _, arg := range args {
				if arg >= 0 && nodes[arg].cst && nodes[arg].vector() {
					if _, ok := pins[arg]; !ok {
						pins[arg] = int32(len(pinList))
						pinList = append(pinList, pin{slot: int32(len(pinList)), data: nodes[arg].vec})
					}
				}
			}
		}
		ks := &kernelSpace{
			nodes:     nodes,
			inKernel:  func(id int32) bool { return in[id] },
			isVec:     func(id int32) bool { return nodes[id].vector() },
			pinned:    func(id int32) (int32, bool) { s, ok := pins[id]; return s, ok },
			scalar:    func(id int32) int32 { return reg[id] },
			firstFree: len(pinList),
		}
		kern, nslots, rootSlots := ks.build(order, roots, fused && fuseKernels)
		var rs []reduction
		for i, r := range reds {
			rs = append(rs, reduction{op: nodes[r].op, src: rootSlots[i], dst: reg[r]})
		}
		if fused {
			if fuseKernels {
				kern, rs = fuseReductions(kern, rs)
			}
			lp.kern, lp.nslots, lp.pins, lp.reds = kern, nslots, pinList, rs
		} else {
			lp.jkern, lp.jnslots, lp.jpins, lp.jreds = kern, nslots, pinList, rs
		}
	}
	return lp
}

// lowerBlock builds the block tape of a model without vectors.
func lowerBlock(nodes []node, reach []bool, root int32, dim int) *blockTape {
	bt := &blockTape{rootSlot: -1, rootParam: -1}
	rn := &nodes[root]
	switch {
	case rn.op == opParam:
		bt.rootParam = int(rn.k)
		return bt
	case rn.cst:
		bt.rootConst = rn.val
		return bt
	}
	in := map[int32]bool{}
	for id := range nodes {
		nd := &nodes[id]
		if reach[id] && !nd.cst && nd.op != opParam {
			in[int32(id)] = true
		}
	}
	for k := 0; k < dim; k++ {
		bt.pins = append(bt.pins, pin{slot: int32(k), param: k}) // slots 0..dim-1 view the parameters
	}
	konst := map[uint64]int32{}
	ks := &kernelSpace{
		nodes:    nodes,
		inKernel: func(id int32) bool { return in[id] },
		isVec:    func(id int32) bool { return !nodes[id].cst },
		pinned: func(id int32) (int32, bool) {
			if nodes[id].op == opParam {
				return int32(nodes[id].k), true
			}
			return 0, false
		},
		scalar: func(id int32) int32 {
			bits := math.Float64bits(nodes[id].val)
			if c, ok := konst[bits]; ok {
				return c
			}
			c := int32(len(bt.consts))
			bt.consts = append(bt.consts, nodes[id].val)
			konst[bits] = c
			return c
		},
		firstFree: dim,
	}
	kern, nslots, rootSlots := ks.build(sortedKeys(in), []int32{root}, fuseKernels)
	bt.kern, bt.nslots, bt.rootSlot = kern, nslots, rootSlots[0]
	return bt
}
