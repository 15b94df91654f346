package eval

import (
	"math"
	"slices"
)

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
			if r < 0 {
				continue
			}
			if ls.bcast[r] == nil {
				ls.bcast[r] = make([]float64, S*row)
			}
			// Every loop that reads the register refills its broadcast
			// (runLoop clears filled for its reads): loops of different
			// lengths reading the same scalar (the shape of a Weibull
			// over four observed and two censored lifetimes) otherwise
			// took the first loop's broadcast, filled over its shorter
			// chunk, and the derivatives came out wrong or NaN.
			if !slices.Contains(ls.reads[li], r) {
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
// of the loop: the register does not change while the loop runs). The
// first chunk is the longest, so the broadcast covers its m elements, not
// a whole chunk's row: a loop over a dozen data points filled 64 elements
// of each of the jet's rows, 14 % of the 4-D counts benchmark.
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
			fill(row(buf, t, m), src[t])
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
