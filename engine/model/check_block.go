package model

import (
	"fmt"
	"math"
)

// Limits of blocks.
const (
	// MaxSteps bounds a repeat block's steps, an ode block's output times
	// and its substeps.
	MaxSteps = 100000
)

// blockHeader checks a block's first line: the number of steps, or the
// output times, the starting time and the substeps. It reports whether
// they are valid and the number of elements of each component.
func (c *checker) blockHeader(s *BlockStmt) (int, bool) {
	constant := func(e Expr, what string) (sval, bool) {
		shape, dep := c.expr(e, true)
		if shape == badShape {
			return sval{}, false
		}
		if dep {
			c.errs.add(startPos(e), "the steps, times and substeps of a block are fixed numbers or data", "%s cannot depend on the parameters", what)
			return sval{}, false
		}
		v, ok := c.static(e)
		if !ok {
			c.errs.add(startPos(e), "use numbers, data and len(...)", "%s is not a constant", what)
			return sval{}, false
		}
		return v, true
	}
	count := func(e Expr, what string) (int, bool) {
		v, ok := constant(e, what)
		if !ok {
			return 0, false
		}
		if v.vec {
			c.errs.add(startPos(e), "", "%s must be a number, not a vector", what)
			return 0, false
		}
		n := v.v[0]
		if n != math.Trunc(n) || n < 1 || n > MaxSteps {
			c.errs.add(startPos(e), fmt.Sprintf("a whole number from 1 to %d", MaxSteps), "%s is %s", what, fmtNum(n))
			return 0, false
		}
		return int(n), true
	}
	if s.Kind == Recurrence {
		n, ok := count(s.Steps, "the number of steps")
		s.NSteps = n
		return n, ok
	}
	times, okT := constant(s.Times, "the output times")
	start, okS := constant(s.Start, "the starting time")
	sub, okN := count(s.Substeps, "the number of substeps")
	if !okT || !okS || !okN {
		return 0, false
	}
	if start.vec {
		c.errs.add(startPos(s.Start), "", "the starting time must be a number, not a vector")
		return 0, false
	}
	t0 := start.v[0]
	if math.IsInf(t0, 0) || math.IsNaN(t0) {
		c.errs.add(startPos(s.Start), "", "the starting time is %s", fmtNum(t0))
		return 0, false
	}
	prev := t0
	for i, t := range times.v {
		if math.IsInf(t, 0) || math.IsNaN(t) || t < prev || (i > 0 && t == prev) {
			c.errs.add(startPos(s.Times), "the output times increase strictly, from the starting time on",
				"output time %d is %s, after %s", i+1, fmtNum(t), fmtNum(prev))
			return 0, false
		}
		prev = t
	}
	if len(times.v) > MaxSteps {
		c.errs.add(startPos(s.Times), "", "more than %d output times", MaxSteps)
		return 0, false
	}
	s.TimeVals, s.StartVal, s.NSub = times.v, t0, sub
	return len(times.v), true
}

// block checks a repeat or ode block and defines its state components as
// vectors.
func (c *checker) block(s *BlockStmt) {
	n, ok := c.blockHeader(s)
	var comps []*BlockLine
	names := map[string]Pos{}
	for _, l := range s.Lines {
		if at, dup := names[l.Name]; dup {
			c.errs.add(l.At, "give each line of the block its own name", "%s is already a line of this block, at line %d", l.Name, at.Line)
			ok = false
		}
		names[l.Name] = l.At
		if l.Component() {
			comps = append(comps, l)
		}
	}
	if s.Var != "" {
		if _, dup := names[s.Var]; dup {
			c.errs.add(s.VarAt, "", "%s names both the step and a line of the block", s.Var)
			ok = false
		}
	}
	for name, at := range names {
		if c.isComponent(name, s) {
			continue
		}
		if !c.freeLocalName(name, at) {
			ok = false
		}
	}
	if s.Var != "" && !c.freeLocalName(s.Var, s.VarAt) {
		ok = false
	}
	if len(comps) == 0 {
		c.errs.add(s.At, fmt.Sprintf("a state component is NAME = START %s EXPR", s.Kind.Word()),
			"the %s block has no state component", s.Kind.Keyword())
		ok = false
	}
	// Starting values: only names above the block.
	dep := false
	for _, l := range comps {
		c.blockComps = names
		shape, d := c.expr(l.Init, false)
		c.blockComps = nil
		dep = dep || d
		if shape.Len > 0 {
			c.errs.add(startPos(l.Init), "each state component is a scalar", "the starting value of %s is a vector of %d elements", l.Name, shape.Len)
			ok = false
		}
		ok = ok && shape != badShape
	}
	sc := newScope()
	for _, l := range comps {
		l.Slot = sc.add(l.Name, Shape{}, dep, "a state component")
	}
	s.VarSlot = -1
	if s.Var != "" {
		what := "the step number"
		if s.Kind == ODE {
			what = "the time"
		}
		s.VarSlot = sc.add(s.Var, Shape{}, false, what)
		if s.Kind == Recurrence {
			sc.stepSlot = s.VarSlot
		}
	}
	saved := c.saveContext()
	c.scope, c.defining = sc, ""
	if ok {
		c.blockSteps = n
	}
	perStep := 0
	for _, l := range s.Lines {
		if !l.Component() {
			shape, d := c.expr(l.Rule, false)
			if shape.Len > 0 {
				c.errs.add(startPos(l.Rule), "each line of a block is a scalar; take an element (v[k]) or a sum", "%s is a vector of %d elements", l.Name, shape.Len)
				ok = false
			}
			ok = ok && shape != badShape
			l.Slot = sc.add(l.Name, Shape{}, d, "a quantity of the step")
		}
		perStep += c.opsSize(l.Rule)
	}
	for _, l := range comps {
		shape, d := c.expr(l.Rule, false)
		dep = dep || d
		if shape.Len > 0 {
			c.errs.add(startPos(l.Rule), "each state component is a scalar; take an element (v[k]) or a sum", "the %s rule of %s is a vector of %d elements", s.Kind.Word(), l.Name, shape.Len)
			ok = false
		}
		ok = ok && shape != badShape
	}
	c.blockSteps = 0
	c.restoreContext(saved)
	s.NSlots = len(sc.shapes)
	if ok {
		total := n * perStep
		if s.Kind == ODE {
			// Four evaluations and the combination of the stages per substep.
			total = min(n*s.NSub, maxSizeCount/(4*perStep+8*len(comps)+1)) * (4*perStep + 8*len(comps))
		}
		c.addUnrolled(total, s.At, "this "+s.Kind.Keyword()+" block")
	}
	for _, l := range comps {
		if c.defAt[l.Name] != l.At {
			continue // reported by declare
		}
		c.defs[l.Name] = len(c.m.Defs)
		c.m.Defs = append(c.m.Defs, Def{Name: l.Name, Shape: Shape{Len: max(n, 1)}, DependsOnParams: dep || !ok, At: l.At, Block: s, Comp: indexOf(comps, l)})
	}
}

func indexOf(ls []*BlockLine, l *BlockLine) int {
	for i, x := range ls {
		if x == l {
			return i
		}
	}
	return -1
}

// isComponent reports whether name is a state component of block s.
func (c *checker) isComponent(name string, s *BlockStmt) bool {
	for _, l := range s.Lines {
		if l.Name == name && l.Component() {
			return true
		}
	}
	return false
}

// freeLocalName reports (and complains) when a block's local name is
// already taken by a parameter, a definition or a function.
func (c *checker) freeLocalName(name string, at Pos) bool {
	var taken string
	switch {
	case reservedName(name) != "":
		taken = reservedName(name)
	case c.declAt[name] != (Pos{}):
		taken = fmt.Sprintf("a parameter declared at line %d", c.declAt[name].Line)
	case c.isParam(name):
		taken = "a parameter"
	case c.defAt[name] != (Pos{}):
		taken = fmt.Sprintf("defined at line %d", c.defAt[name].Line)
	case c.funcAt[name] != (Pos{}):
		taken = fmt.Sprintf("a function defined at line %d", c.funcAt[name].Line)
	default:
		return true
	}
	c.errs.add(at, "names inside a block are its own: choose one not used elsewhere", "%s is %s", name, taken)
	return false
}

// isParam reports whether name is a parameter found so far.
func (c *checker) isParam(name string) bool {
	_, ok := c.params[name]
	return ok
}
