package eval

import "math"

// Derivative mode over data vectors. A loop's kernel runs one instruction
// at a time over a chunk of jetChunkLen elements, like the value kernels,
// with the chunk's jets stored component by component: slot s holds S rows
// of jetChunkLen numbers (values, then each gradient entry, then each
// packed Hessian entry), so every step of the jet rules is a tight loop
// over the elements.

// jetLoopSpace is the scratch space of the loops in derivative mode.
type jetLoopSpace struct {
	slots  [][]float64  // per slot: S rows of jetChunkLen
	pinned []bool       // per slot of the running loop: views data
	data   [][]float64  // per pinned slot: the data chunk
	bcast  [][]float64  // per scalar register a kernel reads: its jet over a chunk
	filled []bool       // per register: broadcast in this run of the loop
	reads  [][]int32    // per loop: the scalar registers its kernel reads
	part   [6][]float64 // per element: f, fa, fb, faa, fab, fbb
	elem   []float64    // one element's jet (logsumexp)
	acc    []float64    // logsumexp reductions: max, then S sums
}

func (ls *jetLoopSpace) init(p *program, S int) {
	row := jetChunkLen
	buf := make([]float64, p.maxSlots*S*row)
	ls.slots = make([][]float64, p.maxSlots)
	for s := range ls.slots {
		ls.slots[s] = buf[s*S*row : (s+1)*S*row]
	}
	ls.pinned = make([]bool, p.maxSlots)
	ls.data = make([][]float64, p.maxSlots)
	ls.bcast = make([][]float64, p.nregs)
	ls.filled = make([]bool, p.nregs)
	ls.reads = make([][]int32, len(p.loops))
	for li, lp := range p.loops {
		for _, in := range lp.jkern {
			var r int32 = -1
			switch in.form {
			case formVS:
				r = in.b
			case formSV:
				r = in.a
			}
			if r >= 0 && ls.bcast[r] == nil {
				ls.bcast[r] = make([]float64, S*row)
				ls.reads[li] = append(ls.reads[li], r)
			}
		}
	}
	for i := range ls.part {
		ls.part[i] = make([]float64, row)
	}
	ls.elem = make([]float64, S)
	nred := 0
	for _, lp := range p.loops {
		nred = max(nred, len(lp.jreds))
	}
	ls.acc = make([]float64, nred*(S+1))
}

// jetVec is a kernel operand over a chunk: values and, unless it is
// constant, the component rows.
type jetVec struct {
	jet []float64 // S rows of jetChunkLen; nil for a constant
	val []float64 // the m values
}

// row returns component t (0 the value, 1..d the gradient, then the packed
// Hessian) of a jet chunk.
func row(jet []float64, t, m int) []float64 {
	return jet[t*jetChunkLen : t*jetChunkLen+m]
}

// runLoop runs a loop in derivative mode, a chunk at a time.
func (js *jetSpace) runLoop(p *program, li int) {
	ls := &js.loop
	lp := &p.loops[li]
	S := js.S
	for s := 0; s < lp.jnslots; s++ {
		ls.pinned[s] = false
	}
	for _, r := range ls.reads[li] {
		ls.filled[r] = false
	}
	for _, pn := range lp.jpins {
		ls.pinned[pn.slot] = true
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
			st := ls.acc[ri*(S+1) : (ri+1)*(S+1)]
			st[0] = math.Inf(-1) // running max
			for i := 1; i < len(st); i++ {
				st[i] = 0 // S0, S1 (d), S2 (nh)
			}
		}
	}
	for off := 0; off < lp.n; off += jetChunkLen {
		m := min(jetChunkLen, lp.n-off)
		for _, pn := range lp.jpins {
			ls.data[pn.slot] = pn.data[off : off+m]
		}
		for i := range lp.jkern {
			js.chunkInstr(p, &lp.jkern[i], m, off)
		}
		for ri, red := range lp.jreds {
			js.chunkReduce(red, ri, m)
		}
	}
	for ri, red := range lp.jreds {
		if red.op == opRLse {
			js.finishLse(red, ri)
		}
	}
}

// vecOperand resolves a slot operand.
func (js *jetSpace) vecOperand(slot int32, m int) jetVec {
	ls := &js.loop
	if ls.pinned[slot] {
		return jetVec{val: ls.data[slot][:m]}
	}
	j := ls.slots[slot]
	return jetVec{jet: j, val: row(j, 0, m)}
}

// scalarOperand broadcasts a scalar register over a chunk (once per run
// of the loop: the register does not change while the loop runs).
func (js *jetSpace) scalarOperand(p *program, r int32, m int) jetVec {
	ls := &js.loop
	buf := ls.bcast[r]
	n := js.S
	if !p.isVar[r] {
		n = 1
	}
	if !ls.filled[r] {
		ls.filled[r] = true
		src := js.regs[int(r)*js.S : int(r+1)*js.S]
		for t := 0; t < n; t++ {
			fill(row(buf, t, jetChunkLen), src[t])
		}
	}
	if n == 1 {
		return jetVec{val: row(buf, 0, m)}
	}
	return jetVec{jet: buf, val: row(buf, 0, m)}
}

func fill(v []float64, x float64) {
	for i := range v {
		v[i] = x
	}
}

// chunkInstr runs one kernel instruction over m elements.
func (js *jetSpace) chunkInstr(p *program, in *kinstr, m, off int) {
	out := js.loop.slots[in.dst]
	if in.form == formPack {
		S := js.S
		for e := 0; e < m; e++ {
			r := in.elems[off+e]
			src := js.regs[int(r)*S : int(r+1)*S]
			row(out, 0, m)[e] = src[0]
			for t := 1; t < S; t++ {
				v := 0.0
				if p.isVar[r] {
					v = src[t]
				}
				row(out, t, m)[e] = v
			}
		}
		return
	}
	if in.form == formVVV {
		js.chunkBinomLogit(out, js.vecOperand(in.a, m), js.vecOperand(in.b, m).val, js.vecOperand(in.c, m).val, m)
		return
	}
	var a, b jetVec
	switch in.form {
	case formV:
		a = js.vecOperand(in.a, m)
	case formVV:
		a, b = js.vecOperand(in.a, m), js.vecOperand(in.b, m)
	case formVS:
		a, b = js.vecOperand(in.a, m), js.scalarOperand(p, in.b, m)
	case formSV:
		a, b = js.scalarOperand(p, in.a, m), js.vecOperand(in.b, m)
	}
	js.chunkApply(in.op, in.k, out, a, b, m)
}

// chunkApply writes the jets of op(a, b) over m elements into out.
func (js *jetSpace) chunkApply(op opcode, k float64, out []float64, a, b jetVec, m int) {
	S := js.S
	ov := row(out, 0, m)
	switch op {
	case opAdd, opSub:
		sign := 1.0
		if op == opSub {
			sign = -1
		}
		for e := range ov {
			if op == opAdd {
				ov[e] = a.val[e] + b.val[e]
			} else {
				ov[e] = a.val[e] - b.val[e]
			}
		}
		for t := 1; t < S; t++ {
			o := row(out, t, m)
			switch {
			case a.jet != nil && b.jet != nil:
				ar, br := row(a.jet, t, m)[:len(o)], row(b.jet, t, m)[:len(o)]
				for e := range o {
					o[e] = ar[e] + sign*br[e]
				}
			case a.jet != nil:
				copy(o, row(a.jet, t, m))
			case b.jet != nil:
				br := row(b.jet, t, m)
				for e := range o {
					o[e] = sign * br[e]
				}
			default:
				fill(o, 0)
			}
		}
		return
	case opNeg, opMulK, opDivK, opSubKR, opAddK:
		c := -1.0
		switch op {
		case opMulK:
			c = k
		case opDivK:
			c = 1 / k
		case opAddK:
			c = 1
		}
		for e := range ov {
			ov[e] = ops[op].value(a.val[e], 0, k)
		}
		for t := 1; t < S; t++ {
			o := row(out, t, m)
			if a.jet == nil {
				fill(o, 0)
				continue
			}
			ar := row(a.jet, t, m)
			for e := range o {
				o[e] = c * ar[e]
			}
		}
		return
	case opMin, opMax, opGuardGT, opGuardGE, opGuardLT, opGuardLE:
		// Element by element: the derivatives of the selected operand.
		for e := range ov {
			av, bv := a.val[e], b.val[e]
			var src jetVec
			keep := true
			switch op {
			case opMin:
				src, ov[e] = b, min(av, bv)
				if av <= bv {
					src = a
				}
			case opMax:
				src, ov[e] = b, max(av, bv)
				if av >= bv {
					src = a
				}
			default:
				src, ov[e] = a, guard(op, av, bv, k)
				keep = guardPass(op, bv, k)
			}
			for t := 1; t < S; t++ {
				v := 0.0
				if keep && src.jet != nil {
					v = row(src.jet, t, m)[e]
				}
				row(out, t, m)[e] = v
			}
		}
		return
	}
	// The rules with partial derivatives, computed element by element.
	ls := &js.loop
	f, fa, fb := ls.part[0][:m], ls.part[1][:m], ls.part[2][:m]
	faa, fab, fbb := ls.part[3][:m], ls.part[4][:m], ls.part[5][:m]
	info := &ops[op]
	singular := false
	switch {
	case op == opMul:
		for e := range f {
			av, bv := a.val[e], b.val[e]
			f[e], fa[e], fb[e], faa[e], fab[e], fbb[e] = av*bv, bv, av, 0, 1, 0
		}
	case op == opSq:
		for e := range f {
			av := a.val[e]
			f[e], fa[e], faa[e] = av*av, 2*av, 2
		}
	case info.class == classUnary:
		for e := range f {
			f[e], fa[e], faa[e] = info.d1(a.val[e], k)
			singular = singular || fa[e]-fa[e] != 0 || faa[e]-faa[e] != 0 || fa[e] == 0 && faa[e] == 0
		}
	default:
		for e := range f {
			f[e], fa[e], fb[e], faa[e], fab[e], fbb[e] = info.d2(a.val[e], b.val[e], k)
			singular = singular || fa[e]-fa[e] != 0 || fb[e]-fb[e] != 0 || faa[e]-faa[e] != 0 ||
				fab[e]-fab[e] != 0 || fbb[e]-fbb[e] != 0
		}
	}
	if info.class == classUnary || a.jet == nil || b.jet == nil {
		// A rule in one operand: a, or b when a is constant.
		x, g1, g2 := a, fa, faa
		if info.class == classBinary && a.jet == nil {
			x, g1, g2 = b, fb, fbb
		}
		copy(ov, f)
		if x.jet == nil {
			for t := 1; t < S; t++ {
				fill(row(out, t, m), 0)
			}
			return
		}
		if singular {
			js.chunkSingular(out, x, jetVec{}, g1, nil, g2, nil, nil, m)
			return
		}
		d := js.d
		if op == opLog || op == opLog1p {
			// As logRule: u = r g, H = r H - u u^T (no underflow of r^2).
			for i := 1; i <= d; i++ {
				o, xr := row(out, i, m), row(x.jet, i, m)
				for e := range o {
					o[e] = g1[e] * xr[e]
				}
			}
			t := 1 + d
			for i := 1; i <= d; i++ {
				ui := row(out, i, m)
				for j := i; j <= d; j++ {
					o, uj, xh := row(out, t, m), row(out, j, m), row(x.jet, t, m)
					for e := range o {
						o[e] = g1[e]*xh[e] - ui[e]*uj[e]
					}
					t++
				}
			}
			return
		}
		g1, g2 = g1[:m], g2[:m]
		for i := 1; i <= d; i++ {
			o, xr := row(out, i, m), row(x.jet, i, m)[:m]
			for e := range o {
				o[e] = g1[e] * xr[e]
			}
		}
		t := 1 + d
		for i := 1; i <= d; i++ {
			xi := row(x.jet, i, m)[:m]
			for j := i; j <= d; j++ {
				o, xj, xh := row(out, t, m), row(x.jet, j, m)[:m], row(x.jet, t, m)[:m]
				for e := range o {
					o[e] = g1[e]*xh[e] + g2[e]*xi[e]*xj[e]
				}
				t++
			}
		}
		return
	}
	copy(ov, f)
	if singular {
		js.chunkSingular(out, a, b, fa, fb, faa, fab, fbb, m)
		return
	}
	d := js.d
	for i := 1; i <= d; i++ {
		o, ar, br := row(out, i, m), row(a.jet, i, m)[:m], row(b.jet, i, m)[:m]
		for e := range o {
			o[e] = fa[e]*ar[e] + fb[e]*br[e]
		}
	}
	t := 1 + d
	for i := 1; i <= d; i++ {
		ai, bi := row(a.jet, i, m)[:m], row(b.jet, i, m)[:m]
		for j := i; j <= d; j++ {
			o := row(out, t, m)
			aj, bj := row(a.jet, j, m)[:m], row(b.jet, j, m)[:m]
			ah, bh := row(a.jet, t, m)[:m], row(b.jet, t, m)[:m]
			for e := range o {
				o[e] = fa[e]*ah[e] + fb[e]*bh[e] + faa[e]*ai[e]*aj[e] +
					fab[e]*(ai[e]*bj[e]+bi[e]*aj[e]) + fbb[e]*bi[e]*bj[e]
			}
			t++
		}
	}
}

// chunkBinomLogit writes the jets of opBinomLogit(a; k, nk) over m
// elements: a rule in a alone (the counts are data).
func (js *jetSpace) chunkBinomLogit(out []float64, a jetVec, k, nk []float64, m int) {
	S := js.S
	d := js.d
	ls := &js.loop
	ov := row(out, 0, m)
	f1, f2 := ls.part[1][:m], ls.part[3][:m]
	singular := false
	for e := range ov {
		ov[e], f1[e], f2[e] = binomLogitPartials(a.val[e], k[e], nk[e])
		singular = singular || f1[e]-f1[e] != 0 || f2[e]-f2[e] != 0
	}
	if a.jet == nil {
		for t := 1; t < S; t++ {
			fill(row(out, t, m), 0)
		}
		return
	}
	if singular {
		js.chunkSingular(out, a, jetVec{}, f1, nil, f2, nil, nil, m)
		return
	}
	for i := 1; i <= d; i++ {
		o, xr := row(out, i, m), row(a.jet, i, m)[:m]
		for e := range o {
			o[e] = f1[e] * xr[e]
		}
	}
	t := 1 + d
	for i := 1; i <= d; i++ {
		xi := row(a.jet, i, m)[:m]
		for j := i; j <= d; j++ {
			o, xj, xh := row(out, t, m), row(a.jet, j, m)[:m], row(a.jet, t, m)[:m]
			for e := range o {
				o[e] = f1[e]*xh[e] + f2[e]*xi[e]*xj[e]
			}
			t++
		}
	}
}

// chunkSingular applies a rule element by element through the scalar jet
// rules (which keep structural zeros where a partial is infinite, and
// handle log without underflow). b may be empty for a one-operand rule.
func (js *jetSpace) chunkSingular(out []float64, a, b jetVec, fa, fb, faa, fab, fbb []float64, m int) {
	S := js.S
	ls := &js.loop
	ea := ls.elem
	var eb, eo [15]float64
	for e := 0; e < m; e++ {
		for t := 0; t < S; t++ {
			ea[t] = row(a.jet, t, m)[e]
			if b.jet != nil {
				eb[t] = row(b.jet, t, m)[e]
			}
		}
		f := row(out, 0, m)[e]
		o := eo[:S]
		switch {
		case b.jet != nil:
			js.binaryRule(o, ea, eb[:S], f, fa[e], fb[e], faa[e], fab[e], fbb[e])
		case fb == nil && faa != nil && fa != nil && isLogPartials(fa[e], faa[e]):
			js.logRule(o, ea, f, fa[e])
		default:
			js.unaryRule(o, ea, f, fa[e], faa[e])
		}
		for t := 1; t < S; t++ {
			row(out, t, m)[e] = o[t]
		}
	}
}

// isLogPartials reports whether f' = r and f” = -r^2 (the partials of
// log and log1p), for which logRule avoids the underflow of r^2.
func isLogPartials(f1, f2 float64) bool {
	return f2 == -f1*f1
}

// chunkReduce folds m elements of a reduction's source slot into its
// register's jet.
func (js *jetSpace) chunkReduce(red reduction, ri, m int) {
	S := js.S
	d := js.d
	acc := js.regs[int(red.dst)*S : int(red.dst+1)*S]
	src := js.loop.slots[red.src]
	v := row(src, 0, m)
	switch red.op {
	case opSum:
		for t := 0; t < S; t++ {
			acc[t] += sum4(row(src, t, m))
		}
	case opSumSq:
		// (v^2)' = 2 v g, (v^2)'' = 2 v H + 2 g g^T.
		acc[0] += sumSq4(v)
		for i := 1; i <= d; i++ {
			acc[i] += 2 * dot(v, row(src, i, m))
		}
		t := 1 + d
		for i := 1; i <= d; i++ {
			gi := row(src, i, m)
			for j := i; j <= d; j++ {
				acc[t] += 2*dot(v, row(src, t, m)) + 2*dot(gi, row(src, j, m))
				t++
			}
		}
	case opRMin, opRMax:
		best := -1
		for e := range v {
			x := v[e]
			better := x < acc[0]
			if red.op == opRMax {
				better = x > acc[0]
			}
			if better || x != x && acc[0] == acc[0] {
				acc[0] = x
				best = e
			}
		}
		if best >= 0 {
			for t := 1; t < S; t++ {
				acc[t] = row(src, t, m)[best]
			}
		}
	case opRLse:
		ea := js.loop.elem
		st := js.loop.acc[ri*(S+1) : (ri+1)*(S+1)]
		for e := range v {
			for t := 0; t < S; t++ {
				ea[t] = row(src, t, m)[e]
			}
			js.addLse(st, ea)
		}
	}
}

// dot is the dot product of a and b with four partial sums.
func dot(a, b []float64) float64 {
	b = b[:len(a)]
	var s0, s1, s2, s3 float64
	i := 0
	for ; i+4 <= len(a); i += 4 {
		aw, bw := a[i:i+4:i+4], b[i:i+4:i+4]
		s0 += aw[0] * bw[0]
		s1 += aw[1] * bw[1]
		s2 += aw[2] * bw[2]
		s3 += aw[3] * bw[3]
	}
	for ; i < len(a); i++ {
		s0 += a[i] * b[i]
	}
	return (s0 + s1) + (s2 + s3)
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
	t := 0
	for i := 0; i < d; i++ {
		for j := i; j < d; j++ {
			st[2+d+t] += w * (h[t] + g[i]*g[j])
			t++
		}
	}
}

// finishLse turns a logsumexp state into the reduction's jet:
// value M + log S0, gradient S1/S0, Hessian S2/S0 - g g^T.
func (js *jetSpace) finishLse(red reduction, ri int) {
	S := js.S
	d := js.d
	st := js.loop.acc[ri*(S+1) : (ri+1)*(S+1)]
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
	t := 0
	for i := 0; i < d; i++ {
		for j := i; j < d; j++ {
			acc[1+d+t] = st[2+d+t]*inv - g[i]*g[j]
			t++
		}
	}
}
