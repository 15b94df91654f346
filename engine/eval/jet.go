package eval

import "math"

// Derivative mode: forward-mode second-order automatic differentiation.
// Every register carries a jet: its value, its gradient with respect to the
// d parameters and its Hessian, symmetric and packed (the upper triangle row
// by row), S = 1 + d + d(d+1)/2 numbers in all. A unary f maps a jet a to
//
//	value f(a), gradient f'(a) a.g, Hessian f'(a) a.H + f''(a) a.g a.g^T,
//
// and a binary f(a, b) adds the terms of its partial derivatives
// fa a.H + fb b.H + faa a.g a.g^T + fab (a.g b.g^T + b.g a.g^T) + fbb b.g b.g^T.

// jetSpace holds the jets of the scalar registers and of a loop's slots.
type jetSpace struct {
	d, nh, S int
	hi, hj   []int // row and column of each packed Hessian entry
	regs     []float64
	code     []jinstr
	loop     jetLoopSpace
}

func (js *jetSpace) init(p *program) {
	d := p.dim
	js.d = d
	js.nh = d * (d + 1) / 2
	js.S = 1 + d + js.nh
	js.hi = make([]int, 0, js.nh)
	js.hj = make([]int, 0, js.nh)
	for i := 0; i < d; i++ {
		for j := i; j < d; j++ {
			js.hi = append(js.hi, i)
			js.hj = append(js.hj, j)
		}
	}
	js.regs = make([]float64, p.nregs*js.S)
	for r := 0; r < p.nregs; r++ {
		js.regs[r*js.S] = p.init[r]
	}
	for k := 0; k < d; k++ {
		js.regs[k*js.S+1+k] = 1 // d x_k / d x_k
	}
	js.loop.init(p, js.S)
	js.prepare(p)
}

// reg returns register r's jet, or nil when r is a constant.
func (js *jetSpace) reg(p *program, r int32) []float64 {
	if !p.isVar[r] {
		return nil
	}
	return js.regs[int(r)*js.S : int(r+1)*js.S]
}

// jinstr is a scalar instruction prepared for derivative mode: register
// numbers are offsets into the jets, and aVar/bVar say which operands vary.
// A chain instruction (op == opChain) applies the unary operations
// chain[0], chain[1], ... to register a with one jet rule, composing their
// derivatives by the chain rule on numbers first.
type jinstr struct {
	op         opcode
	aVar, bVar bool
	dst, a, b  int32
	k          float64
	chain      []chainStep
}

// chainStep is one unary operation of a chain.
type chainStep struct {
	op opcode
	k  float64
}

// opChain marks a chain instruction (derivative mode only).
const opChain = numOps

// maxChain bounds the unary operations one chain recomputes.
const maxChain = 6

// prepare builds the derivative-mode form of the scalar tape. Runs of unary
// operations become chains: their intermediate jets are not computed unless
// something else needs them (each jet rule costs O(d^2); composing f' and
// f” along the chain costs a few multiplications).
func (js *jetSpace) prepare(p *program) {
	S := int32(js.S)
	def := make([]int, p.nregs) // instruction defining each register, or -1
	for r := range def {
		def[r] = -1
	}
	for i, in := range p.code {
		if in.op != opLoop {
			def[in.dst] = i
		}
	}
	unary := func(i int) bool {
		in := &p.code[i]
		return in.op != opLoop && ops[in.op].class == classUnary && p.isVar[in.a]
	}
	// The chain of each unary instruction, innermost first, and its base.
	chains := make([][]chainStep, len(p.code))
	base := make([]int32, len(p.code))
	for i := range p.code {
		if !unary(i) {
			continue
		}
		steps := []chainStep{{p.code[i].op, p.code[i].k}}
		cur := p.code[i].a
		for len(steps) < maxChain && def[cur] >= 0 && unary(def[cur]) {
			j := def[cur]
			steps = append(steps, chainStep{p.code[j].op, p.code[j].k})
			cur = p.code[j].a
		}
		for l, r := 0, len(steps)-1; l < r; l, r = l+1, r-1 {
			steps[l], steps[r] = steps[r], steps[l]
		}
		chains[i], base[i] = steps, cur
	}
	// Which jets are needed: the result's, the loops' scalar inputs, and
	// backwards, the operands of every needed instruction (a chain's base).
	need := make([]bool, p.nregs)
	need[p.root] = true
	for _, lp := range p.loops {
		for _, in := range lp.jkern {
			switch in.form {
			case formVS:
				need[in.b] = true
			case formSV:
				need[in.a] = true
			case formPack:
				for _, e := range in.elems {
					need[e] = true
				}
			}
		}
	}
	for i := len(p.code) - 1; i >= 0; i-- {
		in := &p.code[i]
		if in.op == opLoop || !need[in.dst] {
			continue
		}
		if chains[i] != nil {
			need[base[i]] = true
			continue
		}
		need[in.a] = true
		need[in.b] = true
	}
	js.code = js.code[:0]
	for i, in := range p.code {
		if in.op == opLoop {
			js.code = append(js.code, jinstr{op: opLoop, a: in.a})
			continue
		}
		if !need[in.dst] {
			continue // only inside chains
		}
		ji := jinstr{op: in.op, k: in.k, dst: in.dst * S, a: in.a * S, b: in.b * S,
			aVar: p.isVar[in.a], bVar: p.isVar[in.b]}
		if c := chains[i]; len(c) > 1 {
			ji.op, ji.chain, ji.a, ji.b = opChain, c, base[i]*S, base[i]*S
		}
		js.code = append(js.code, ji)
	}
}

// runChain writes the jet of a chain of unary operations applied to a.
func (js *jetSpace) runChain(o, a []float64, chain []chainStep) {
	v, d1, d2 := a[0], 1.0, 0.0
	for _, st := range chain {
		switch st.op {
		case opLog, opLog1p:
			// As logRule: (log u)' = u'/u, (log u)'' = u''/u - (u'/u)^2.
			r := 1 / v
			if st.op == opLog1p {
				r = 1 / (1 + v)
				v = math.Log1p(v)
			} else {
				v = math.Log(v)
			}
			d1 = mulStructural(r, d1)
			d2 = mulStructural(r, d2) - d1*d1
		case opAddK:
			v += st.k
		case opSubKR:
			v, d1, d2 = st.k-v, -d1, -d2
		case opNeg:
			v, d1, d2 = -v, -d1, -d2
		case opMulK:
			v, d1, d2 = v*st.k, d1*st.k, d2*st.k
		case opDivK:
			v, d1, d2 = v/st.k, d1/st.k, d2/st.k
		case opSq:
			// (u^2)' = 2 u u', (u^2)'' = 2 u'^2 + 2 u u''.
			d2 = 2*d1*d1 + mulStructural(2*v, d2)
			d1 = mulStructural(2*v, d1)
			v = v * v
		default:
			f, f1, f2 := ops[st.op].d1(v, st.k)
			v = f
			d2 = mulStructural(f2, d1*d1) + mulStructural(f1, d2)
			d1 = mulStructural(f1, d1)
		}
	}
	js.unaryRule(o, a, v, d1, d2)
}

// run evaluates the tape with jets at x.
func (js *jetSpace) run(ev *Evaluator, x, grad, hess []float64) float64 {
	p := ev.prog
	S := js.S
	R := js.regs
	for k, v := range x {
		R[k*S] = v
	}
	for i := range js.code {
		in := &js.code[i]
		if in.op == opLoop {
			js.runLoop(p, int(in.a))
			continue
		}
		o := R[in.dst : int(in.dst)+S]
		if in.op == opChain {
			js.runChain(o, R[in.a:int(in.a)+S], in.chain)
			continue
		}
		av, bv := R[in.a], R[in.b]
		var a, b []float64
		if in.aVar {
			a = R[in.a : int(in.a)+S]
		}
		if in.bVar {
			b = R[in.b : int(in.b)+S]
		}
		switch in.op {
		case opAdd:
			if a != nil && b != nil {
				b = b[:len(o)]
				a = a[:len(o)]
				for t := range o {
					o[t] = a[t] + b[t]
				}
				continue
			}
		case opSub:
			if a != nil && b != nil {
				b = b[:len(o)]
				a = a[:len(o)]
				for t := range o {
					o[t] = a[t] - b[t]
				}
				continue
			}
		case opMul:
			if a != nil && b != nil {
				js.binaryRule(o, a, b, av*bv, bv, av, 0, 1, 0)
				continue
			}
		case opSq:
			js.unaryRule(o, a, av*av, 2*av, 2)
			continue
		case opNeg:
			scale(o, a, -1)
			continue
		case opAddK:
			copy(o, a)
			o[0] = av + in.k
			continue
		case opMulK:
			scale(o, a, in.k)
			continue
		case opDivK:
			scale(o, a, 1/in.k)
			o[0] = av / in.k
			continue
		case opSubKR:
			scale(o, a, -1)
			o[0] = in.k - av
			continue
		}
		js.apply(in.op, in.k, o, av, a, bv, b)
	}
	root := R[int(p.root)*S : int(p.root+1)*S]
	v := root[0]
	d := js.d
	if math.IsInf(v, 0) || v != v || !p.isVar[p.root] {
		fill := math.NaN()
		if !p.isVar[p.root] && !math.IsInf(v, 0) && v == v {
			fill = 0 // a constant log-density
		}
		for i := range grad {
			grad[i] = fill
		}
		for i := range hess {
			hess[i] = fill
		}
		return v
	}
	copy(grad, root[1:1+d])
	h := root[1+d:]
	t := 0
	for i := 0; i < d; i++ {
		for j := i; j < d; j++ {
			hess[i*d+j] = h[t]
			hess[j*d+i] = h[t]
			t++
		}
	}
	return v
}

// apply writes into dst the jet of op applied to a and b. A nil jet is a
// constant whose value is av (or bv).
func (js *jetSpace) apply(op opcode, k float64, dst []float64, av float64, a []float64, bv float64, b []float64) {
	switch op {
	case opAdd, opSub:
		sign := 1.0
		if op == opSub {
			sign = -1
		}
		v := ops[op].value(av, bv, 0)
		switch {
		case a != nil && b != nil:
			for i := 1; i < len(dst); i++ {
				dst[i] = a[i] + sign*b[i]
			}
		case a != nil:
			copy(dst, a)
		case b != nil:
			scale(dst, b, sign)
		default:
			setConst(dst, v)
		}
		dst[0] = v
		return
	case opMul:
		switch {
		case a != nil && b != nil:
			js.binaryRule(dst, a, b, av*bv, bv, av, 0, 1, 0)
		case a != nil:
			scale(dst, a, bv)
			dst[0] = av * bv
		case b != nil:
			scale(dst, b, av)
			dst[0] = av * bv
		default:
			setConst(dst, av*bv)
		}
		return
	case opSq:
		js.unaryRule(dst, a, av*av, 2*av, 2)
		return
	case opNeg:
		scale(dst, a, -1)
		return
	case opAddK:
		copy(dst, a)
		dst[0] = av + k
		return
	case opMulK:
		scale(dst, a, k)
		dst[0] = av * k
		return
	case opDivK:
		scale(dst, a, 1/k)
		dst[0] = av / k
		return
	case opSubKR:
		scale(dst, a, -1)
		dst[0] = k - av
		return
	case opMin, opMax:
		pickA := av <= bv
		if op == opMax {
			pickA = av >= bv
		}
		v := ops[op].value(av, bv, 0)
		src := b
		if pickA {
			src = a
		}
		if src == nil {
			setConst(dst, v)
		} else {
			copy(dst, src)
			dst[0] = v
		}
		return
	case opGuardGT, opGuardGE, opGuardLT, opGuardLE:
		if guardPass(op, bv, k) {
			if a == nil {
				setConst(dst, av)
			} else {
				copy(dst, a)
			}
			return
		}
		setConst(dst, guard(op, av, bv, k))
		return
	}
	switch op {
	case opLog:
		js.logRule(dst, a, math.Log(av), 1/av)
		return
	case opLog1p:
		js.logRule(dst, a, math.Log1p(av), 1/(1+av))
		return
	}
	info := &ops[op]
	switch info.class {
	case classUnary:
		f, f1, f2 := info.d1(av, k)
		if a == nil {
			setConst(dst, f)
			return
		}
		js.unaryRule(dst, a, f, f1, f2)
	case classBinary:
		f, fa, fb, faa, fab, fbb := info.d2(av, bv, k)
		switch {
		case a != nil && b != nil:
			js.binaryRule(dst, a, b, f, fa, fb, faa, fab, fbb)
		case a != nil:
			js.unaryRule(dst, a, f, fa, faa)
		case b != nil:
			js.unaryRule(dst, b, f, fb, fbb)
		default:
			setConst(dst, f)
		}
	}
}

// scale writes c times the derivative part of a into dst (dst[0] is left
// for the caller).
func scale(dst, a []float64, c float64) {
	dst[0] = a[0] * c
	a = a[:len(dst)]
	for i := 1; i < len(dst); i++ {
		dst[i] = a[i] * c
	}
}
