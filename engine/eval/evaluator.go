package eval

import (
	"math"

	"bellcheck/engine/model"
	"bellcheck/engine/special"
	"bellcheck/engine/target"
)

// Sizes of the work areas.
const (
	// blockLen is the number of points a block instruction handles at once.
	blockLen = 256
	// chunkLen is the number of data elements a loop's kernel handles at
	// once in value mode, jetChunkLen in derivative mode.
	chunkLen    = 256
	jetChunkLen = 64
)

// Evaluator evaluates a compiled model's log-density. It keeps scratch
// space: it is not safe for concurrent use; Clone gives an independent copy.
// Evaluation does not allocate.
type Evaluator struct {
	prog   *program
	params []model.Param
	form   model.Form

	regs []float64     // scalar registers
	vs   [][][]float64 // per loop: its slots' views
	lse  [][]lseState  // per loop: its logsumexp reductions' state
	xbuf []float64

	bvs [][]float64 // block tape slots

	flat flatSpace // flat block tape slots

	// jets is the scratch of the derivatives, made at the first call of
	// LogDensityDerivs (jetsReady): an evaluator used for values only (the
	// ode step check's, a clone for a plot's slices) never pays for it, a
	// fifth of compiling a model with an ode block.
	jets      jetSpace
	jetsReady bool
}

var _ target.Density = (*Evaluator)(nil)

func newEvaluator(p *program, m *model.Model) *Evaluator {
	ev := &Evaluator{prog: p, form: m.Form}
	ev.params = append([]model.Param(nil), m.Params...)
	ev.alloc()
	return ev
}

// alloc makes the scratch space of a fresh evaluator.
func (ev *Evaluator) alloc() {
	p := ev.prog
	ev.regs = append([]float64(nil), p.init...)
	ev.xbuf = make([]float64, p.dim)
	vbuf := make([]float64, p.maxSlots*chunkLen)
	ev.vs = make([][][]float64, len(p.loops))
	ev.lse = make([][]lseState, len(p.loops))
	for i := range p.loops {
		lp := &p.loops[i]
		for _, red := range lp.reds {
			if red.op == opRLse {
				ev.lse[i] = append(ev.lse[i], lseState{})
			}
		}
		v := make([][]float64, lp.nslots)
		for s := range v {
			v[s] = vbuf[s*chunkLen : (s+1)*chunkLen]
		}
		ev.vs[i] = v
	}
	if bt := p.block; bt != nil {
		bbuf := make([]float64, bt.nslots*blockLen)
		ev.bvs = make([][]float64, bt.nslots)
		for s := range ev.bvs {
			ev.bvs[s] = bbuf[s*blockLen : (s+1)*blockLen]
		}
	}
	if p.flat != nil {
		ev.flat.init(p.flat)
	}
}

// Dim returns the number of parameters.
func (ev *Evaluator) Dim() int { return ev.prog.dim }

// Form says whether the model gave a log-density or a cost (the evaluator
// returns the log-density either way).
func (ev *Evaluator) Form() model.Form { return ev.form }

// Params returns the model's parameters, in order (a copy).
func (ev *Evaluator) Params() []model.Param {
	return append([]model.Param(nil), ev.params...)
}

// Clone returns an independent evaluator of the same model.
func (ev *Evaluator) Clone() target.Density {
	c := &Evaluator{prog: ev.prog, params: ev.params, form: ev.form}
	c.alloc()
	return c
}

// LogDensity returns the log-density at x; NaN when len(x) != Dim().
func (ev *Evaluator) LogDensity(x []float64) float64 {
	p := ev.prog
	if len(x) != p.dim {
		return math.NaN()
	}
	r := ev.regs
	copy(r, x)
	for i := range p.code {
		in := &p.code[i]
		switch in.op {
		case opAdd:
			r[in.dst] = r[in.a] + r[in.b]
		case opSub:
			r[in.dst] = r[in.a] - r[in.b]
		case opMul:
			r[in.dst] = r[in.a] * r[in.b]
		case opDiv:
			r[in.dst] = r[in.a] / r[in.b]
		case opNeg:
			r[in.dst] = -r[in.a]
		case opSq:
			r[in.dst] = r[in.a] * r[in.a]
		case opAddK:
			r[in.dst] = r[in.a] + in.k
		case opMulK:
			r[in.dst] = r[in.a] * in.k
		case opDivK:
			r[in.dst] = r[in.a] / in.k
		case opSubKR:
			r[in.dst] = in.k - r[in.a]
		case opLog:
			r[in.dst] = math.Log(r[in.a])
		case opExp:
			r[in.dst] = special.Exp(r[in.a])
		case opLoop:
			ev.runLoop(int(in.a))
		default:
			r[in.dst] = ops[in.op].value(r[in.a], r[in.b], in.k)
		}
	}
	return r[p.root]
}

// runLoop runs loop li over its data in chunks, leaving its reductions in
// the registers.
func (ev *Evaluator) runLoop(li int) {
	lp := &ev.prog.loops[li]
	vs := ev.vs[li]
	lse := ev.lse[li]
	r := ev.regs
	for _, red := range lp.reds {
		switch red.op {
		case opSum, opSumSq:
			r[red.dst] = 0
		case opRMin:
			r[red.dst] = math.Inf(1)
		case opRMax:
			r[red.dst] = math.Inf(-1)
		}
	}
	for i := range lse {
		lse[i].reset()
	}
	for off := 0; off < lp.n; off += chunkLen {
		m := min(chunkLen, lp.n-off)
		for _, pn := range lp.pins {
			vs[pn.slot] = pn.data[off : off+m]
		}
		runKernel(lp.kern, vs, r, m, off)
		j := 0
		for ri := range lp.reds {
			red := &lp.reds[ri]
			if red.fused != nil {
				r[red.dst] += linSum(red.fused, vs, r, m, red.op == opSumSq)
				continue
			}
			v := vs[red.src][:m]
			switch red.op {
			case opSum:
				r[red.dst] += sum4(v)
			case opSumSq:
				r[red.dst] += sumSq4(v)
			case opRMin:
				acc := r[red.dst]
				for _, x := range v {
					acc = min(acc, x)
				}
				r[red.dst] = acc
			case opRMax:
				acc := r[red.dst]
				for _, x := range v {
					acc = max(acc, x)
				}
				r[red.dst] = acc
			case opRLse:
				lse[j].add(v)
				j++
			}
		}
	}
	j := 0
	for _, red := range lp.reds {
		if red.op == opRLse {
			r[red.dst] = lse[j].value()
			j++
		}
	}
}

// LogDensityBlock evaluates the log-density at the points given by columns:
// cols[k][i] is coordinate k of point i, out[i] receives the log-density.
// Every column must have at least len(out) elements (otherwise out is
// filled with NaN), and out must not share memory with a column.
func (ev *Evaluator) LogDensityBlock(cols [][]float64, out []float64) {
	p := ev.prog
	n := len(out)
	ok := len(cols) == p.dim
	for k := 0; ok && k < len(cols); k++ {
		ok = len(cols[k]) >= n
	}
	if !ok {
		for i := range out {
			out[i] = math.NaN()
		}
		return
	}
	bt := p.block
	if bt == nil && p.flat != nil {
		ev.flat.run(p.flat, cols, out)
		return
	}
	if bt == nil {
		// Models over data vectors: their loops already run over the data
		// a chunk at a time, so go point by point.
		x := ev.xbuf
		for i := range out {
			for k := range x {
				x[k] = cols[k][i]
			}
			out[i] = ev.LogDensity(x)
		}
		return
	}
	switch {
	case bt.rootParam >= 0:
		copy(out, cols[bt.rootParam][:n])
		return
	case bt.rootSlot < 0:
		for i := range out {
			out[i] = bt.rootConst
		}
		return
	}
	vs := ev.bvs
	for s := 0; s < n; s += blockLen {
		m := min(blockLen, n-s)
		for _, pn := range bt.pins {
			vs[pn.slot] = cols[pn.param][s : s+m]
		}
		vs[bt.rootSlot] = out[s : s+m]
		runKernel(bt.kern, vs, bt.consts, m, 0)
	}
}

// LogDensityDerivs returns the log-density at x and writes its gradient into
// grad and its Hessian, row-major, into hess. Where the log-density is not
// finite (outside the support, or undefined) the gradient and Hessian are
// NaN. With lengths other than Dim() and Dim()^2 it returns NaN.
func (ev *Evaluator) LogDensityDerivs(x, grad, hess []float64) float64 {
	d := ev.prog.dim
	if len(x) != d || len(grad) != d || len(hess) != d*d {
		fillNaN(grad)
		fillNaN(hess)
		return math.NaN()
	}
	if !ev.jetsReady {
		ev.jets.init(ev.prog)
		ev.jetsReady = true
	}
	return ev.jets.run(ev, x, grad, hess)
}

func fillNaN(v []float64) {
	for i := range v {
		v[i] = math.NaN()
	}
}
