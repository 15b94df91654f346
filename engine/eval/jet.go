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
			js.runLoop(p, int(in.a))
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
