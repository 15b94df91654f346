package model

import (
	"fmt"
	"math"
	"strings"
)

// scope is the frame of local names while a function body or a block is
// checked: each name has a slot, a shape and whether it varies with the
// parameters.
type scope struct {
	slots  map[string]int
	shapes []Shape
	deps   []bool
	what   []string // "an argument", "a state component", ... for messages
	// stepSlot is the slot of a repeat block's step number (-1 when none);
	// while indices are checked, stepVal is the step being looked at.
	stepSlot int
	stepVal  float64
	stepVec  []float64 // all the step numbers at once, when set
	stepSet  bool
}

func newScope() *scope { return &scope{slots: map[string]int{}, stepSlot: -1} }

func (s *scope) add(name string, shape Shape, dep bool, what string) int {
	slot := len(s.shapes)
	s.slots[name] = slot
	s.shapes = append(s.shapes, shape)
	s.deps = append(s.deps, dep)
	s.what = append(s.what, what)
	return slot
}

// bodyKey identifies one check of a function body: the function and the
// shapes and dependence of its arguments.
type bodyKey struct {
	f   *FuncStmt
	sig string
}

type bodyResult struct {
	shape Shape
	dep   bool
}

// Limits of blocks.
const (
	maxSizeCount = math.MaxInt32 // operation counts saturate here
)

// local resolves a name of the innermost frame, if there is one.
func (c *checker) local(e *Ident) (Shape, bool, bool) {
	if c.scope == nil {
		return Shape{}, false, false
	}
	slot, ok := c.scope.slots[e.Name]
	if !ok {
		return Shape{}, false, false
	}
	e.Kind, e.Index = LocalRef, slot
	return c.scope.shapes[slot], c.scope.deps[slot], true
}

// funcDef checks a function definition: the names it calls, and its size.
func (c *checker) funcDef(s *FuncStmt) {
	s.VisibleDefs = len(c.m.Defs)
	for _, a := range s.Args {
		if what := reservedName(a); what != "" {
			c.errs.add(s.At, "choose another name for the argument", "argument %s of %s cannot be used: it is %s", a, s.Name, what)
			return
		}
	}
	ok := c.funcCalls(s, s.Body)
	s.Size = c.opsSize(s.Body)
	if !ok {
		c.badFuncs[s.Name] = true
	}
	c.funcs[s.Name] = len(c.m.UserFuncs)
	c.m.UserFuncs = append(c.m.UserFuncs, s)
}

// funcCalls reports calls in a function body that cannot be expanded: the
// function itself, and functions defined below it.
func (c *checker) funcCalls(f *FuncStmt, e Expr) bool {
	ok := true
	walkExpr(e, func(e Expr) {
		call, isCall := e.(*Call)
		if !isCall {
			return
		}
		switch {
		case call.Name == f.Name:
			c.errs.add(call.At, "a function is expanded where it is used, so it cannot call itself; to step a state through time write a repeat block",
				"%s calls itself: functions cannot be recursive", f.Name)
			ok = false
		case c.funcAt[call.Name] != (Pos{}):
			if _, above := c.funcs[call.Name]; !above {
				c.errs.add(call.At, fmt.Sprintf("move the definition of %s above %s", call.Name, f.Name),
					"%s is defined at line %d, below %s; a function may call only functions defined above it",
					call.Name, c.funcAt[call.Name].Line, f.Name)
				ok = false
			}
		}
	})
	return ok
}

// walkExpr calls f on e and every expression inside it.
func walkExpr(e Expr, f func(Expr)) {
	if e == nil {
		return
	}
	f(e)
	switch e := e.(type) {
	case *Unary:
		walkExpr(e.X, f)
	case *Binary:
		walkExpr(e.X, f)
		walkExpr(e.Y, f)
	case *Call:
		for _, a := range e.Args {
			walkExpr(a, f)
		}
	case *Vector:
		for _, a := range e.Elems {
			walkExpr(a, f)
		}
	case *Index:
		walkExpr(e.X, f)
		walkExpr(e.I, f)
		walkExpr(e.Lo, f)
		walkExpr(e.Hi, f)
	}
}

// opsSize estimates the operations of e once the functions it calls are
// expanded: one per operator, call and index.
func (c *checker) opsSize(e Expr) int {
	n := 0
	walkExpr(e, func(e Expr) {
		switch e := e.(type) {
		case *Unary, *Binary, *Index:
			n++
		case *Call:
			n++
			if i, ok := c.funcs[e.Name]; ok {
				n += c.m.UserFuncs[i].Size
			}
		}
		n = min(n, maxSizeCount)
	})
	return n
}

// addUnrolled counts operations against the limit and reports going over
// it at pos.
func (c *checker) addUnrolled(n int, pos Pos, what string) {
	c.unrolled = min(c.unrolled+n, maxSizeCount)
	if c.unrolled > c.lim.maxUnrolled && !c.overUnrolled {
		c.overUnrolled = true
		c.errs.add(pos, "use fewer steps, substeps or output times, or a shorter window of observations",
			"%s makes the model too large: about %d operations once unrolled, the limit is %d", what, c.unrolled, c.lim.maxUnrolled)
	}
}

// userCall checks a call of a function defined in the model: its body is
// checked with the arguments' shapes (once per combination of shapes).
func (c *checker) userCall(e *Call, idx int) (Shape, bool) {
	f := c.m.UserFuncs[idx]
	e.User = f
	shapes := make([]Shape, len(e.Args))
	deps := make([]bool, len(e.Args))
	bad := false
	for i, a := range e.Args {
		shapes[i], deps[i] = c.expr(a, true)
		bad = bad || shapes[i] == badShape
	}
	dep := false
	for _, d := range deps {
		dep = dep || d
	}
	if len(e.Args) != len(f.Args) {
		c.errs.add(e.At, fmt.Sprintf("%s is defined at line %d as %s(%s)", f.Name, f.At.Line, f.Name, strings.Join(f.Args, ", ")),
			"wrong number of arguments for %s: got %d, want %d", f.Name, len(e.Args), len(f.Args))
		return badShape, dep
	}
	if bad || c.badFuncs[f.Name] || c.expanding[f] {
		return badShape, dep
	}
	var sig strings.Builder
	for i := range shapes {
		fmt.Fprintf(&sig, "%d/%v,", shapes[i].Len, deps[i])
	}
	key := bodyKey{f, sig.String()}
	if r, ok := c.bodies[key]; ok {
		return r.shape, r.dep
	}
	sc := newScope()
	for i, a := range f.Args {
		sc.add(a, shapes[i], deps[i], "an argument of "+f.Name)
	}
	saved := c.saveContext()
	c.scope, c.defining, c.visibleDefs, c.visibleFuncs = sc, "", f.VisibleDefs, idx
	c.expanding[f] = true
	shape, bdep := c.expr(f.Body, true)
	c.expanding[f] = false
	c.restoreContext(saved)
	c.bodies[key] = bodyResult{shape, bdep}
	return shape, bdep
}

// context is what changes while a function body or a block is checked.
type context struct {
	scope        *scope
	defining     string
	visibleDefs  int
	visibleFuncs int
}

func (c *checker) saveContext() context {
	return context{c.scope, c.defining, c.visibleDefs, c.visibleFuncs}
}

func (c *checker) restoreContext(s context) {
	c.scope, c.defining, c.visibleDefs, c.visibleFuncs = s.scope, s.defining, s.visibleDefs, s.visibleFuncs
}

// index checks X[I] and X[Lo:Hi].
func (c *checker) index(e *Index) (Shape, bool) {
	sx, dep := c.expr(e.X, false)
	var idxExprs []Expr
	if e.I != nil {
		idxExprs = []Expr{e.I}
	} else {
		idxExprs = []Expr{e.Lo, e.Hi}
	}
	var ishape Shape
	for _, ie := range idxExprs {
		s, d := c.expr(ie, e.I != nil)
		if s == badShape {
			return badShape, dep
		}
		if d {
			hint := "an index must be known before the analysis: numbers, data, len(...) and the step number of a repeat block"
			if id, ok := ie.(*Ident); ok && id.Kind == ParamRef && !c.m.Params[id.Index].Declared {
				hint = fmt.Sprintf("%s is not defined, so it is a parameter; %s (name it with as in the repeat line)", id.Name, hint)
			}
			c.errs.add(startPos(ie), hint, "an index cannot depend on the parameters")
			return badShape, dep
		}
		if e.I == nil && s.Len > 0 {
			c.errs.add(startPos(ie), "the ends of a slice v[a:b] are two numbers", "an end of a slice must be a scalar, not a vector of %d elements", s.Len)
			return badShape, dep
		}
		ishape = s
	}
	if sx == badShape {
		return badShape, dep
	}
	if sx.Len == 0 {
		what := "this is a scalar"
		if id, ok := e.X.(*Ident); ok {
			what = id.Name + " is a scalar"
			if id.Kind == ParamRef {
				what = id.Name + " is a parameter, a scalar"
			}
		}
		c.errs.add(e.At, "only vectors have elements: index a data vector or a state of a repeat or ode block, as in y[2]",
			"cannot index: %s", what)
		return badShape, dep
	}
	n := sx.Len
	if c.scope != nil && c.scope.stepSlot >= 0 && c.usesStep(e) && c.blockSteps > 0 {
		if !c.checkStepPositions(e, n, ishape) {
			return badShape, dep
		}
	} else if !c.checkPositions(e, n, 0) {
		return badShape, dep
	}
	if e.I != nil {
		return Shape{Len: ishape.Len}, dep
	}
	lo, _ := c.static(e.Lo)
	hi, _ := c.static(e.Hi)
	return Shape{Len: int(hi.v[0]-lo.v[0]) + 1}, dep
}

// maxStepChecks bounds the step-by-step evaluations of indices that are
// vectors of positions depending on the step number (a scalar position is
// evaluated for all steps at once).
const maxStepChecks = 1 << 20

// checkStepPositions checks an index that uses the step number at every
// step of the repeat block.
func (c *checker) checkStepPositions(e *Index, n int, ishape Shape) bool {
	if e.I != nil && ishape.Len == 0 {
		// One evaluation with the step number as the vector 1, 2, ..., N.
		steps := make([]float64, c.blockSteps)
		for k := range steps {
			steps[k] = float64(k + 1)
		}
		c.scope.stepVec, c.scope.stepSet = steps, true
		sv, ok := c.static(e.I)
		c.scope.stepVec, c.scope.stepSet = nil, false
		if ok && len(sv.v) == len(steps) {
			for k, v := range sv.v {
				if !c.checkValue(e.I, v, "the index", k+1, n, vectorName(e)) {
					return false
				}
			}
			return true
		}
	}
	for k := 1; k <= c.blockSteps; k++ {
		c.stepChecks++
		if c.stepChecks > maxStepChecks {
			c.errs.add(e.At, "index by a scalar expression of the step number, such as v[k] or v[k + 1]",
				"too many positions to check in this block")
			return false
		}
		c.scope.stepVal, c.scope.stepSet = float64(k), true
		ok := c.checkPositions(e, n, k)
		c.scope.stepSet = false
		if !ok {
			return false
		}
	}
	return true
}

// usesStep reports whether the index expressions of e use the step number.
func (c *checker) usesStep(e *Index) bool {
	found := false
	for _, ie := range []Expr{e.I, e.Lo, e.Hi} {
		walkExpr(ie, func(x Expr) {
			if id, ok := x.(*Ident); ok && id.Kind == LocalRef && id.Index == c.scope.stepSlot {
				found = true
			}
		})
	}
	return found
}

// checkPositions evaluates the index expressions of e (at step k of a
// repeat block when k > 0) and checks they are whole numbers in 1..n.
func (c *checker) checkPositions(e *Index, n, k int) bool {
	const known = "an index must be known before the analysis: numbers, data, len(...) and the step number of a repeat block"
	check := func(ie Expr, v float64, what string) bool { return c.checkValue(ie, v, what, k, n, vectorName(e)) }
	if e.I != nil {
		sv, ok := c.static(e.I)
		if !ok {
			c.errs.add(startPos(e.I), known, "the index is not a constant")
			return false
		}
		for j, v := range sv.v {
			if v == math.Trunc(v) && v >= 1 && v <= float64(n) {
				continue
			}
			what := "the index"
			if sv.vec {
				what = fmt.Sprintf("position %d of the index", j+1)
			}
			if !check(e.I, v, what) {
				return false
			}
		}
		return true
	}
	lo, okLo := c.static(e.Lo)
	hi, okHi := c.static(e.Hi)
	if !okLo || !okHi {
		bad := e.Lo
		if okLo {
			bad = e.Hi
		}
		c.errs.add(startPos(bad), known, "the end of the slice is not a constant")
		return false
	}
	if !check(e.Lo, lo.v[0], "the start of the slice") || !check(e.Hi, hi.v[0], "the end of the slice") {
		return false
	}
	if hi.v[0] < lo.v[0] {
		at := ""
		if k > 0 {
			at = fmt.Sprintf(" at step %d", k)
		}
		c.errs.add(e.At, "a slice v[a:b] runs from a up to b, with a <= b", "empty slice: it starts at %s and ends at %s%s", fmtNum(lo.v[0]), fmtNum(hi.v[0]), at)
		return false
	}
	return true
}

// vectorName returns " of NAME" when the indexed vector is a name, or "".
func vectorName(e *Index) string {
	if id, ok := e.X.(*Ident); ok {
		return " of " + id.Name
	}
	return ""
}

// checkValue checks one position v (at step k of a repeat block when k > 0)
// against a vector of n elements.
func (c *checker) checkValue(ie Expr, v float64, what string, k, n int, of string) bool {
	if v == math.Trunc(v) && v >= 1 && v <= float64(n) {
		return true
	}
	at := ""
	if k > 0 {
		at = fmt.Sprintf(" at step %d", k)
	}
	switch {
	case v != math.Trunc(v) || math.IsInf(v, 0):
		c.errs.add(startPos(ie), "positions are whole numbers, counted from 1", "%s is %s%s, not a whole number", what, fmtNum(v), at)
		return false
	case v < 1 || v > float64(n):
		hint := "positions count from 1"
		if v == 0 {
			hint = "positions count from 1: the first element is v[1]"
		}
		c.errs.add(startPos(ie), hint, "%s is %s%s, outside the %d elements%s (1 to %d)", what, fmtNum(v), at, n, of, n)
		return false
	}
	return true
}

// sval is a value known before the analysis: a scalar or a vector.
type sval struct {
	v   []float64
	vec bool
}

// static evaluates an expression known before the analysis (numbers,
// constant definitions and data, len, indexing, the step number of a
// repeat block while its indices are checked). Names must be resolved.
func (c *checker) static(e Expr) (sval, bool) {
	switch e := e.(type) {
	case *Number:
		return sval{v: []float64{e.Value}}, true
	case *Unary:
		x, ok := c.static(e.X)
		if !ok {
			return x, false
		}
		out := make([]float64, len(x.v))
		for i, v := range x.v {
			if e.Op == '-' {
				v = -v
			}
			out[i] = v
		}
		return sval{out, x.vec}, true
	case *Binary:
		x, okX := c.static(e.X)
		y, okY := c.static(e.Y)
		if !okX || !okY || (x.vec && y.vec && len(x.v) != len(y.v)) {
			return sval{}, false
		}
		n := max(len(x.v), len(y.v))
		out := make([]float64, n)
		for i := range out {
			out[i] = arith(e.Op, x.v[min(i, len(x.v)-1)], y.v[min(i, len(y.v)-1)])
		}
		return sval{out, x.vec || y.vec}, true
	case *Vector:
		out := make([]float64, len(e.Elems))
		for i, el := range e.Elems {
			x, ok := c.static(el)
			if !ok || x.vec {
				return sval{}, false
			}
			out[i] = x.v[0]
		}
		return sval{out, true}, true
	case *Call:
		if e.Name == "len" && e.User == nil && len(e.Args) == 1 {
			s, ok := c.m.Shapes[e.Args[0]]
			if !ok || s == badShape {
				return sval{}, false
			}
			return sval{v: []float64{float64(max(s.Len, 1))}}, true
		}
	case *Index:
		x, ok := c.static(e.X)
		if !ok || !x.vec {
			return sval{}, false
		}
		if e.I != nil {
			ix, ok := c.static(e.I)
			if !ok {
				return sval{}, false
			}
			out := make([]float64, len(ix.v))
			for i, p := range ix.v {
				if p != math.Trunc(p) || p < 1 || p > float64(len(x.v)) {
					return sval{}, false
				}
				out[i] = x.v[int(p)-1]
			}
			return sval{out, ix.vec}, true
		}
		lo, okLo := c.static(e.Lo)
		hi, okHi := c.static(e.Hi)
		if !okLo || !okHi || lo.vec || hi.vec {
			return sval{}, false
		}
		a, b := lo.v[0], hi.v[0]
		if a != math.Trunc(a) || b != math.Trunc(b) || a < 1 || b > float64(len(x.v)) || a > b {
			return sval{}, false
		}
		return sval{append([]float64(nil), x.v[int(a)-1:int(b)]...), true}, true
	case *Ident:
		switch e.Kind {
		case LocalRef:
			if c.scope != nil && e.Index == c.scope.stepSlot && c.scope.stepSet {
				if c.scope.stepVec != nil {
					return sval{v: c.scope.stepVec, vec: true}, true
				}
				return sval{v: []float64{c.scope.stepVal}}, true
			}
		case DefRef:
			return c.staticDef(e.Index)
		}
	}
	return sval{}, false
}

// staticDef returns the value of definition idx when it is known before
// the analysis.
func (c *checker) staticDef(idx int) (sval, bool) {
	if r, ok := c.staticDefs[idx]; ok {
		return r.val, r.ok
	}
	d := c.m.Defs[idx]
	var r staticResult
	if d.Block == nil && !d.DependsOnParams {
		saved := c.saveContext()
		c.scope = nil // a definition's value does not see a frame
		r.val, r.ok = c.static(d.Value)
		c.restoreContext(saved)
	}
	c.staticDefs[idx] = r
	return r.val, r.ok
}

type staticResult struct {
	val sval
	ok  bool
}

// unrolledWork estimates the elementwise operations on the vectors that
// blocks yield (a block's states, and what is computed from them): they are
// unrolled too, one operation per element. It also records whether a
// definition's value is computed from a block, for later uses of it.
func (c *checker) unrolledWork(e Expr) (int, bool) {
	n := 0
	var walk func(e Expr) bool
	walk = func(e Expr) bool {
		touches := false
		switch e := e.(type) {
		case *Ident:
			if e.Kind == DefRef && e.Index >= 0 && e.Index < len(c.m.Defs) {
				touches = c.m.Defs[e.Index].Block != nil || c.fromBlock[e.Index]
			}
		case *Unary:
			touches = walk(e.X)
		case *Binary:
			a, b := walk(e.X), walk(e.Y)
			touches = a || b
		case *Call:
			for _, a := range e.Args {
				if walk(a) {
					touches = true
					if s := c.m.Shapes[a]; s.Len > 0 {
						n = min(n+s.Len, maxSizeCount)
					}
				}
			}
		case *Vector:
			for _, a := range e.Elems {
				touches = walk(a) || touches
			}
		case *Index:
			touches = walk(e.X)
		}
		if touches {
			if s := c.m.Shapes[e]; s.Len > 0 {
				n = min(n+s.Len, maxSizeCount)
			}
		}
		return touches
	}
	touches := walk(e)
	return n, touches
}
