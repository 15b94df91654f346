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
	slots    [][]float64 // per slot: jetChunkLen jets
	pinned   []bool      // per slot of the running loop: views data
	data     [][]float64 // per pinned slot: the data chunk
	acc      []float64   // logsumexp reductions: max, then S1 sums
	code     []jinstr
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
	buf := make([]float64, p.maxSlots*jetChunkLen*js.S)
	js.slots = make([][]float64, p.maxSlots)
	for s := range js.slots {
		js.slots[s] = buf[s*jetChunkLen*js.S : (s+1)*jetChunkLen*js.S]
	}
	js.pinned = make([]bool, p.maxSlots)
	js.data = make([][]float64, p.maxSlots)
	nred := 0
	for _, lp := range p.loops {
		nred = max(nred, len(lp.reds))
	}
	js.acc = make([]float64, nred*(js.S+1))
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
type jinstr struct {
	op         opcode
	aVar, bVar bool
	dst, a, b  int32
	k          float64
}

// prepare builds the derivative-mode form of the scalar tape.
func (js *jetSpace) prepare(p *program) {
	S := int32(js.S)
	js.code = make([]jinstr, len(p.code))
	for i, in := range p.code {
		js.code[i] = jinstr{op: in.op, k: in.k, a: in.a, b: in.b, dst: in.dst}
		if in.op == opLoop {
			continue
		}
		js.code[i] = jinstr{op: in.op, k: in.k, dst: in.dst * S, a: in.a * S, b: in.b * S,
			aVar: p.isVar[in.a], bVar: p.isVar[in.b]}
	}
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
			js.runLoop(p, &p.loops[in.a])
			continue
		}
		o := R[in.dst : int(in.dst)+S]
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

// unaryRule writes the jet of f(a) given f, f' and f” at a's value.
func (js *jetSpace) unaryRule(dst, a []float64, f, f1, f2 float64) {
	if f1-f1 != 0 || f2-f2 != 0 || f1 == 0 && f2 == 0 {
		js.unaryRuleSingular(dst, a, f, f1, f2)
		return
	}
	d := js.d
	dst = dst[:js.S]
	a = a[:js.S]
	dst[0] = f
	ag := a[1 : 1+d]
	dg := dst[1 : 1+d]
	ag = ag[:len(dg)]
	for i := range dg {
		dg[i] = f1 * ag[i]
	}
	aH := a[1+d:]
	dH := dst[1+d:]
	aH = aH[:len(dH)]
	t := 0
	for i := range ag {
		gi := f2 * ag[i]
		for _, gj := range ag[i:] {
			dH[t] = f1*aH[t] + gi*gj
			t++
		}
	}
}

// logRule writes the jet of log(a) (or log1p(a), with r = 1/(1+a)) as
// gradient u = r a.g and Hessian r a.H - u u^T: the same as unaryRule with
// f' = r, f” = -r^2, but without underflow of r^2 where a is huge.
func (js *jetSpace) logRule(dst, a []float64, f, r float64) {
	if r-r != 0 || r == 0 {
		js.unaryRuleSingular(dst, a, f, r, -r*r)
		return
	}
	d := js.d
	dst = dst[:js.S]
	a = a[:js.S]
	dst[0] = f
	u := dst[1 : 1+d]
	ag := a[1 : 1+d]
	ag = ag[:len(u)]
	for i := range u {
		u[i] = r * ag[i]
	}
	aH := a[1+d:]
	dH := dst[1+d:]
	aH = aH[:len(dH)]
	t := 0
	for i := range u {
		for _, uj := range u[i:] {
			dH[t] = r*aH[t] - u[i]*uj
			t++
		}
	}
}

// unaryRuleSingular is unaryRule where f' or f” is infinite or NaN: a
// derivative that is exactly zero in a (a parameter a does not depend on)
// stays zero instead of becoming NaN.
func (js *jetSpace) unaryRuleSingular(dst, a []float64, f, f1, f2 float64) {
	d := js.d
	dst[0] = f
	for i := 0; i < d; i++ {
		dst[1+i] = mulStructural(f1, a[1+i])
	}
	t := 1 + d
	for i := 0; i < d; i++ {
		for j := i; j < d; j++ {
			dst[t] = mulStructural(f1, a[t]) + mulStructural(f2, a[1+i]*a[1+j])
			t++
		}
	}
}

// binaryRule writes the jet of f(a, b) given its partial derivatives.
func (js *jetSpace) binaryRule(dst, a, b []float64, f, fa, fb, faa, fab, fbb float64) {
	if fa-fa != 0 || fb-fb != 0 || faa-faa != 0 || fab-fab != 0 || fbb-fbb != 0 {
		js.binaryRuleSingular(dst, a, b, f, fa, fb, faa, fab, fbb)
		return
	}
	d := js.d
	dst = dst[:js.S]
	a = a[:js.S]
	b = b[:js.S]
	dst[0] = f
	ag, bg := a[1:1+d], b[1:1+d]
	dg := dst[1 : 1+d]
	ag, bg = ag[:len(dg)], bg[:len(dg)]
	for i := range dg {
		dg[i] = fa*ag[i] + fb*bg[i]
	}
	aH, bH := a[1+d:], b[1+d:]
	dH := dst[1+d:]
	aH, bH = aH[:len(dH)], bH[:len(dH)]
	t := 0
	for i := range ag {
		// Row i: faa ag_i ag_j + fab (ag_i bg_j + bg_i ag_j) + fbb bg_i bg_j
		//      = (faa ag_i + fab bg_i) ag_j + (fab ag_i + fbb bg_i) bg_j.
		ca := faa*ag[i] + fab*bg[i]
		cb := fab*ag[i] + fbb*bg[i]
		for j := i; j < len(ag); j++ {
			dH[t] = fa*aH[t] + fb*bH[t] + ca*ag[j] + cb*bg[j]
			t++
		}
	}
}

// binaryRuleSingular is binaryRule where a partial derivative is infinite
// or NaN; see unaryRuleSingular.
func (js *jetSpace) binaryRuleSingular(dst, a, b []float64, f, fa, fb, faa, fab, fbb float64) {
	d := js.d
	dst[0] = f
	for i := 0; i < d; i++ {
		dst[1+i] = mulStructural(fa, a[1+i]) + mulStructural(fb, b[1+i])
	}
	t := 1 + d
	for i := 0; i < d; i++ {
		for j := i; j < d; j++ {
			ai, aj, bi, bj := a[1+i], a[1+j], b[1+i], b[1+j]
			dst[t] = mulStructural(fa, a[t]) + mulStructural(fb, b[t]) + mulStructural(faa, ai*aj) + mulStructural(fab, ai*bj+bi*aj) + mulStructural(fbb, bi*bj)
			t++
		}
	}
}

// mulStructural is c*x, but 0 where c or x is 0 whatever the other.
func mulStructural(c, x float64) float64 {
	if x == 0 || c == 0 {
		return 0
	}
	return c * x
}

// setConst writes the jet of a constant.
func setConst(dst []float64, v float64) {
	dst[0] = v
	for i := 1; i < len(dst); i++ {
		dst[i] = 0
	}
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

// runLoop runs a loop in derivative mode: the kernel element by element
// with jets, a chunk of the data at a time, and the reductions of jets.
func (js *jetSpace) runLoop(p *program, lp *loop) {
	S := js.S
	for s := 0; s < lp.jnslots; s++ {
		js.pinned[s] = false
	}
	for _, pn := range lp.jpins {
		js.pinned[pn.slot] = true
	}
	for ri, red := range lp.jreds {
		acc := js.regs[int(red.dst)*S : int(red.dst+1)*S]
		setConst(acc, 0)
		switch red.op {
		case opRMin:
			acc[0] = math.Inf(1)
		case opRMax, opRLse:
			acc[0] = math.Inf(-1)
		}
		if red.op == opRLse {
			st := js.acc[ri*(S+1) : (ri+1)*(S+1)]
			st[0] = math.Inf(-1) // running max
			for i := 1; i < len(st); i++ {
				st[i] = 0 // S0, S1 (d), S2 (nh)
			}
		}
	}
	for off := 0; off < lp.n; off += jetChunkLen {
		m := min(jetChunkLen, lp.n-off)
		for _, pn := range lp.jpins {
			js.data[pn.slot] = pn.data[off : off+m]
		}
		for i := range lp.jkern {
			js.kernelInstr(p, &lp.jkern[i], m, off)
		}
		for ri, red := range lp.jreds {
			js.reduce(red, ri, m)
		}
	}
	for ri, red := range lp.jreds {
		if red.op == opRLse {
			js.finishLse(red, ri)
		}
	}
}

// operand returns element e of a kernel operand: its value and jet (nil for
// a constant).
func (js *jetSpace) operand(p *program, form uint8, which int, slot int32, e int) (float64, []float64) {
	S := js.S
	vector := form == formVV || (form == formV && which == 0) || (form == formVS && which == 0) || (form == formSV && which == 1)
	if !vector {
		return js.regs[int(slot)*S], js.reg(p, slot)
	}
	if js.pinned[slot] {
		return js.data[slot][e], nil
	}
	j := js.slots[slot][e*S : (e+1)*S]
	return j[0], j
}

func (js *jetSpace) kernelInstr(p *program, in *kinstr, m, off int) {
	S := js.S
	out := js.slots[in.dst]
	for e := 0; e < m; e++ {
		dst := out[e*S : (e+1)*S]
		if in.form == formPack {
			r := in.elems[off+e]
			if a := js.reg(p, r); a != nil {
				copy(dst, a)
			} else {
				setConst(dst, js.regs[int(r)*S])
			}
			continue
		}
		av, a := js.operand(p, in.form, 0, in.a, e)
		var bv float64
		var b []float64
		if in.form != formV {
			bv, b = js.operand(p, in.form, 1, in.b, e)
		}
		js.apply(in.op, in.k, dst, av, a, bv, b)
	}
}

// reduce folds m elements of a reduction's source slot into its register.
func (js *jetSpace) reduce(red reduction, ri, m int) {
	S := js.S
	d := js.d
	acc := js.regs[int(red.dst)*S : int(red.dst+1)*S]
	src := js.slots[red.src]
	for e := 0; e < m; e++ {
		x := src[e*S : (e+1)*S]
		switch red.op {
		case opSum:
			for i := range acc {
				acc[i] += x[i]
			}
		case opSumSq:
			v := x[0]
			acc[0] += v * v
			g := x[1 : 1+d]
			for i := range g {
				acc[1+i] += 2 * v * g[i]
			}
			h := x[1+d : S]
			for t := range h {
				acc[1+d+t] += 2*v*h[t] + 2*g[js.hi[t]]*g[js.hj[t]]
			}
		case opRMin:
			if x[0] < acc[0] || x[0] != x[0] && acc[0] == acc[0] {
				copy(acc, x)
			}
		case opRMax:
			if x[0] > acc[0] || x[0] != x[0] && acc[0] == acc[0] {
				copy(acc, x)
			}
		case opRLse:
			js.addLse(js.acc[ri*(S+1):(ri+1)*(S+1)], x)
		}
	}
}

// addLse adds e^x to a logsumexp state: st[0] the running maximum M, then
// sum w, sum w g, sum w (H + g g^T) with w = e^(x-M).
func (js *jetSpace) addLse(st, x []float64) {
	d := js.d
	v := x[0]
	switch {
	case v != v || st[0] != st[0]:
		st[0] = math.NaN()
		return
	case math.IsInf(st[0], 1):
		return
	case math.IsInf(v, 1):
		st[0] = v
		return
	case math.IsInf(v, -1):
		return
	}
	if v > st[0] {
		f := math.Exp(st[0] - v) // 0 when the maximum was -Inf
		for i := 1; i < len(st); i++ {
			st[i] *= f
		}
		st[0] = v
	}
	w := math.Exp(v - st[0])
	st[1] += w
	g := x[1 : 1+d]
	for i := range g {
		st[2+i] += w * g[i]
	}
	h := x[1+d : js.S]
	for t := range h {
		st[2+d+t] += w * (h[t] + g[js.hi[t]]*g[js.hj[t]])
	}
}

// finishLse turns a logsumexp state into the reduction's jet:
// value M + log S0, gradient S1/S0, Hessian S2/S0 - g g^T.
func (js *jetSpace) finishLse(red reduction, ri int) {
	S := js.S
	d := js.d
	st := js.acc[ri*(S+1) : (ri+1)*(S+1)]
	acc := js.regs[int(red.dst)*S : int(red.dst+1)*S]
	if st[1] == 0 || math.IsInf(st[0], 0) || st[0] != st[0] {
		setConst(acc, st[0])
		return
	}
	acc[0] = st[0] + math.Log(st[1])
	inv := 1 / st[1]
	for i := 0; i < d; i++ {
		acc[1+i] = st[2+i] * inv
	}
	g := acc[1 : 1+d]
	for t := 0; t < js.nh; t++ {
		acc[1+d+t] = st[2+d+t]*inv - g[js.hi[t]]*g[js.hj[t]]
	}
}
