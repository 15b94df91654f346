package eval

import (
	"bellcheck/engine/model"
)

// maxExpansion bounds the nesting of function expansions (the front end
// rejects recursion; this guards a model that did not come from it).
const maxExpansion = 1000

// userCall expands a call of a function defined in the model: the body with
// the arguments' nodes as its local names.
func (c *compiler) userCall(e *model.Call) int32 {
	b := c.b
	f := e.User
	if len(e.Args) != len(f.Args) || c.depth >= maxExpansion {
		b.pos = e.At
		return b.fail(ErrArity, "%s takes %d arguments, got %d", f.Name, len(f.Args), len(e.Args))
	}
	args := make([]int32, len(e.Args))
	for i, a := range e.Args {
		args[i] = c.expr(a)
	}
	saved := c.frame
	c.frame = args
	c.depth++
	v := c.expr(f.Body)
	c.depth--
	c.frame = saved
	return v
}

// index builds X[I] or X[Lo:Hi].
func (c *compiler) index(e *model.Index) int32 {
	b := c.b
	x := c.expr(e.X)
	if e.I != nil {
		i := c.expr(e.I)
		b.pos = e.At
		return b.index(x, i)
	}
	lo := c.expr(e.Lo)
	hi := c.expr(e.Hi)
	b.pos = e.At
	return b.slice(x, lo, hi)
}

// component returns the vector of a block's state component, unrolling the
// block the first time one of its components is used.
func (c *compiler) component(d model.Def) int32 {
	s := d.Block
	comps, ok := c.blocks[s]
	if !ok {
		if s.Kind == model.ODE {
			comps = c.unrollODE(s)
		} else {
			comps = c.unrollRecurrence(s)
		}
		c.blocks[s] = comps
	}
	if d.Comp < 0 || d.Comp >= len(comps) {
		return c.b.fail(ErrNotChecked, "block component %s has no index", d.Name)
	}
	return comps[d.Comp]
}

// blockParts returns a block's state components and its other lines.
func blockParts(s *model.BlockStmt) (comps, lines []*model.BlockLine) {
	for _, l := range s.Lines {
		if l.Component() {
			comps = append(comps, l)
		}
	}
	return comps, s.Lines
}

// checkFrame reports a block whose slots do not fit its frame.
func (c *compiler) checkFrame(s *model.BlockStmt) bool {
	if s.NSlots < 1 || s.NSlots > 1<<16 {
		c.b.pos = s.At
		c.b.fail(ErrNotChecked, "block has %d slots", s.NSlots)
		return false
	}
	for _, l := range s.Lines {
		if l.Slot < 0 || l.Slot >= s.NSlots || l.Rule == nil {
			c.b.pos = l.At
			c.b.fail(ErrNotChecked, "block line %s is not checked", l.Name)
			return false
		}
	}
	return s.VarSlot < s.NSlots
}

// starts builds the starting values of a block's components.
func (c *compiler) starts(comps []*model.BlockLine) []int32 {
	state := make([]int32, len(comps))
	for i, l := range comps {
		state[i] = c.expr(l.Init)
	}
	return state
}

// stepRules evaluates a block's lines once: the quantities in order, then
// each component's rule, from the state and the step's number or time. It
// returns the rules' nodes.
func (c *compiler) stepRules(s *model.BlockStmt, comps []*model.BlockLine, state []int32, v float64) []int32 {
	frame := make([]int32, s.NSlots)
	for i, l := range comps {
		frame[l.Slot] = state[i]
	}
	if s.VarSlot >= 0 {
		frame[s.VarSlot] = c.b.constant(v)
	}
	c.frame = frame
	for _, l := range s.Lines {
		if !l.Component() {
			frame[l.Slot] = c.expr(l.Rule)
		}
	}
	out := make([]int32, len(comps))
	for i, l := range comps {
		out[i] = c.expr(l.Rule)
	}
	c.frame = nil
	return out
}

// unrollRecurrence steps a repeat block: element k of each component is the
// state after step k.
func (c *compiler) unrollRecurrence(s *model.BlockStmt) []int32 {
	comps, _ := blockParts(s)
	if !c.checkFrame(s) || s.NSteps < 1 {
		return make([]int32, len(comps))
	}
	state := c.starts(comps)
	outs := make([][]int32, len(comps))
	for i := range outs {
		outs[i] = make([]int32, s.NSteps)
	}
	for k := 1; k <= s.NSteps && c.b.err == nil; k++ {
		state = c.stepRules(s, comps, state, float64(k))
		for i := range comps {
			outs[i][k-1] = state[i]
		}
	}
	res := make([]int32, len(comps))
	for i := range res {
		res[i] = c.b.statePack(outs[i])
	}
	return res
}

// unrollODE integrates an ode block by the classical fourth-order
// Runge-Kutta method, NSub equal steps between consecutive output times:
// element j of each component is the state at output time j.
func (c *compiler) unrollODE(s *model.BlockStmt) []int32 {
	comps, _ := blockParts(s)
	if !c.checkFrame(s) || s.NSub < 1 || len(s.TimeVals) == 0 {
		return make([]int32, len(comps))
	}
	b := c.b
	state := c.starts(comps)
	outs := make([][]int32, len(comps))
	for i := range outs {
		outs[i] = make([]int32, len(s.TimeVals))
	}
	// axpy returns y + a*k, element by element.
	axpy := func(y []int32, a float64, k []int32) []int32 {
		out := make([]int32, len(y))
		for i := range y {
			out[i] = b.bin(opAdd, y[i], b.un(opMulK, k[i], a), 0)
		}
		return out
	}
	prev := s.StartVal
	for j, tj := range s.TimeVals {
		if tj > prev {
			h := (tj - prev) / float64(s.NSub)
			for m := 0; m < s.NSub && b.err == nil; m++ {
				t := prev + float64(m)*h
				k1 := c.stepRules(s, comps, state, t)
				k2 := c.stepRules(s, comps, axpy(state, h/2, k1), t+h/2)
				k3 := c.stepRules(s, comps, axpy(state, h/2, k2), t+h/2)
				k4 := c.stepRules(s, comps, axpy(state, h, k3), t+h)
				next := make([]int32, len(state))
				for i := range state {
					// y + h/6 (k1 + 2 k2 + 2 k3 + k4)
					inner := b.bin(opAdd, b.bin(opAdd, k1[i], k4[i], 0), b.un(opMulK, b.bin(opAdd, k2[i], k3[i], 0), 2), 0)
					next[i] = b.bin(opAdd, state[i], b.un(opMulK, inner, h/6), 0)
				}
				state = next
			}
		}
		prev = tj
		for i := range comps {
			outs[i][j] = state[i]
		}
	}
	res := make([]int32, len(comps))
	for i := range res {
		res[i] = b.statePack(outs[i])
	}
	return res
}
