package model

import (
	"fmt"
	"math"
	"sort"
	"strings"
)

// badShape marks an expression whose shape could not be found because of an
// error already reported; it combines with anything without a new error.
var badShape = Shape{Len: -1}

// checker resolves names, checks arities, shapes and limits, and fills in
// the Model.
type checker struct {
	m    *Model
	errs *errorSink
	lim  limits

	params   map[string]int // parameter name -> index in m.Params
	defs     map[string]int // definitions made so far -> index in m.Defs
	defAt    map[string]Pos // every (first) definition in the model
	declAt   map[string]Pos // every (first) param declaration
	free     map[string]bool
	skip     map[Stmt]bool // statements already reported as wrong
	defining string        // the definition being checked
	tooMany  bool

	constVal  map[int]float64 // constant value of definitions, by index
	constDone map[int]bool    // constVal computed (true) or found not constant

	// Functions and blocks (check_dyn.go, check_block.go).
	funcAt       map[string]Pos // every (first) function definition
	funcs        map[string]int // functions defined so far -> index in m.UserFuncs
	badFuncs     map[string]bool
	bodies       map[bodyKey]bodyResult
	expanding    map[*FuncStmt]bool
	scope        *scope // the frame of a function body or block being checked
	visibleDefs  int    // definitions a function body may use; -1 for all
	visibleFuncs int    // functions a function body may call; -1 for all
	blockComps   map[string]Pos
	blockSteps   int // steps of the repeat block being checked, for its indices
	staticDefs   map[int]staticResult
	unrolled     int
	overUnrolled bool
	stepChecks   int
	fromBlock    map[int]bool // definitions computed from a block's states
}

// check checks the parsed statements of m and fills in the rest of it. end
// is the position of the end of the text.
func check(m *Model, end Pos, errs *errorSink, lim limits) {
	c := &checker{
		m: m, errs: errs, lim: lim,
		params:    map[string]int{},
		defs:      map[string]int{},
		defAt:     map[string]Pos{},
		declAt:    map[string]Pos{},
		free:      map[string]bool{},
		skip:      map[Stmt]bool{},
		constVal:  map[int]float64{},
		constDone: map[int]bool{},

		funcAt:       map[string]Pos{},
		funcs:        map[string]int{},
		badFuncs:     map[string]bool{},
		bodies:       map[bodyKey]bodyResult{},
		expanding:    map[*FuncStmt]bool{},
		visibleDefs:  -1,
		visibleFuncs: -1,
		staticDefs:   map[int]staticResult{},
		fromBlock:    map[int]bool{},
	}
	c.declare()
	var density *DensityStmt
	for _, st := range m.Stmts {
		if errs.full() {
			return
		}
		if c.skip[st] {
			continue
		}
		switch s := st.(type) {
		case *ParamStmt:
			c.paramBounds(s)
		case *DefineStmt:
			c.define(s)
			work, touches := c.unrolledWork(s.Value)
			if idx, ok := c.defs[s.Name]; ok && touches {
				c.fromBlock[idx] = true
			}
			c.addUnrolled(c.opsSize(s.Value)+work, s.At, "this definition")
		case *FuncStmt:
			c.funcDef(s)
		case *BlockStmt:
			c.block(s)
		case *DensityStmt:
			if density != nil {
				c.errs.add(s.At, "a model has one density expression: add its terms with +, and name other quantities with NAME = EXPR",
					"second density statement; the first is at line %d", density.At.Line)
				continue
			}
			density = s
			c.density(s)
			work, _ := c.unrolledWork(s.Value)
			c.addUnrolled(c.opsSize(s.Value)+work, s.At, "the density")
		}
	}
	c.lookalikes() // confusable.go
	if density == nil {
		c.errs.add(end, "write the log-density as an expression on a line of its own, or cost EXPR for its negative",
			"the model has no density statement")
		return
	}
	if len(m.Params) == 0 {
		c.errs.add(startPos(density.Value), "a name that is neither defined nor declared is a parameter; declare one with param NAME",
			"the model has no parameters")
	}
}

// declare is the first pass: it records every definition's and
// declaration's position, declares the parameters in order, and reports
// names declared or defined twice or that cannot be used.
func (c *checker) declare() {
	for _, st := range c.m.Stmts {
		for _, d := range definedNames(st) {
			if _, dup := c.defAt[d.name]; !dup && reservedName(d.name) == "" {
				c.defAt[d.name] = d.at
			}
		}
		if s, ok := st.(*FuncStmt); ok {
			if _, dup := c.funcAt[s.Name]; !dup {
				c.funcAt[s.Name] = s.At
			}
		}
	}
	for _, st := range c.m.Stmts {
		switch s := st.(type) {
		case *ParamStmt:
			if what := reservedName(s.Name); what != "" {
				c.errs.add(s.NameAt, "", "cannot declare %s as a parameter: it is %s", s.Name, what)
				c.skip[s] = true
				continue
			}
			if at, dup := c.declAt[s.Name]; dup {
				c.errs.add(s.NameAt, "", "parameter %s is already declared at line %d", s.Name, at.Line)
				c.skip[s] = true
				continue
			}
			c.declAt[s.Name] = s.NameAt
			c.addParam(s.Name, s.NameAt, true)
		case *DefineStmt:
			c.walkFree(s.Value)
		case *DensityStmt:
			c.walkFree(s.Value)
		case *FuncStmt:
			c.walkFree(s.Body)
		case *BlockStmt:
			for _, l := range s.Lines {
				c.walkFree(l.Init)
				c.walkFree(l.Rule)
			}
		}
	}
	for _, st := range c.m.Stmts {
		for _, d := range definedNames(st) {
			switch {
			case reservedName(d.name) != "":
				c.errs.add(d.at, "", "cannot define %s: it is %s", d.name, reservedName(d.name))
				c.skip[st] = true
			case c.declAt[d.name] != (Pos{}):
				c.errs.add(d.at, "give the parameter and the defined quantity different names",
					"%s is declared as a parameter at line %d; it cannot also be defined", d.name, c.declAt[d.name].Line)
				c.skip[st] = true
			case c.defAt[d.name] == dataPos && d.at != dataPos:
				c.errs.add(d.at, "rename the column in the data or the quantity in the model",
					"%s is a column of the attached data; it cannot also be defined", d.name)
				c.skip[st] = true
			case c.defAt[d.name] != d.at:
				c.errs.add(d.at, "give the new quantity a name of its own",
					"%s is already defined at line %d", d.name, c.defAt[d.name].Line)
				c.skip[st] = true
			}
		}
		if s, ok := st.(*FuncStmt); ok {
			switch {
			case reservedName(s.Name) != "":
				c.errs.add(s.At, "choose another name for the function", "cannot define %s: it is %s", s.Name, reservedName(s.Name))
				c.skip[st] = true
			case c.funcAt[s.Name] != s.At:
				c.errs.add(s.At, "give the new function a name of its own", "function %s is already defined at line %d", s.Name, c.funcAt[s.Name].Line)
				c.skip[st] = true
			case c.defAt[s.Name] == dataPos:
				c.errs.add(s.At, "rename the column in the data or the function in the model", "%s is a column of the attached data; it cannot also name a function", s.Name)
				c.skip[st] = true
			case c.defAt[s.Name] != (Pos{}) || c.declAt[s.Name] != (Pos{}):
				c.errs.add(s.At, "give the function and the quantity different names", "%s names both a function and a quantity or parameter", s.Name)
				c.skip[st] = true
			}
		}
	}
}

type definedName struct {
	name string
	at   Pos
}

// definedNames lists the names a statement defines: a definition's name,
// a block's state components.
func definedNames(st Stmt) []definedName {
	switch s := st.(type) {
	case *DefineStmt:
		return []definedName{{s.Name, s.At}}
	case *BlockStmt:
		var out []definedName
		for _, l := range s.Lines {
			if l.Component() {
				out = append(out, definedName{l.Name, l.At})
			}
		}
		return out
	}
	return nil
}

// reservedName says what a name that cannot be declared or defined is ("a
// function", "a built-in constant"), or returns "".
func reservedName(name string) string {
	if _, ok := Funcs[name]; ok {
		return "the name of a function"
	}
	if name == "pi" || name == "inf" {
		return "a built-in constant"
	}
	return ""
}

// walkFree records the names used as plain names in e, so that a parameter
// used as a function can be recognised as such.
func (c *checker) walkFree(e Expr) {
	switch e := e.(type) {
	case *Ident:
		c.free[e.Name] = true
	case *Unary:
		c.walkFree(e.X)
	case *Binary:
		c.walkFree(e.X)
		c.walkFree(e.Y)
	case *Call:
		for _, a := range e.Args {
			c.walkFree(a)
		}
	case *Vector:
		for _, a := range e.Elems {
			c.walkFree(a)
		}
	case *Index:
		c.walkFree(e.X)
		c.walkFree(e.I)
		c.walkFree(e.Lo)
		c.walkFree(e.Hi)
	}
}

// addParam appends a parameter and reports the first one over the limit.
func (c *checker) addParam(name string, at Pos, declared bool) int {
	idx := len(c.m.Params)
	if idx >= c.lim.maxParams && !c.tooMany {
		c.tooMany = true
		names := make([]string, idx)
		for i, p := range c.m.Params {
			names[i] = p.Name
		}
		hint := "a name that is neither defined nor declared is a parameter; check for a misspelt name"
		if typos := c.likelyTypos(name, declared); typos != "" {
			hint += ": " + typos
		}
		c.errs.add(at, hint, "too many parameters: %s would be the %s, and a model has at most %d (%s)",
			name, ordinal(idx+1), c.lim.maxParams, strings.Join(names, ", "))
	}
	c.params[name] = idx
	c.m.Params = append(c.m.Params, Param{Name: name, Lo: math.Inf(-1), Hi: math.Inf(1), Declared: declared, At: at})
	return idx
}

// likelyTypos lists the implicit parameters so far, and name when it is
// implicit too, that are near the name of a definition or of another
// parameter: "muu (did you mean mu?), sgma (did you mean sigma?)".
func (c *checker) likelyTypos(name string, declared bool) string {
	var known []string
	for n := range c.defAt {
		known = append(known, n)
	}
	for _, p := range c.m.Params {
		known = append(known, p.Name)
	}
	sort.Strings(known)
	var implicit []string
	for _, p := range c.m.Params {
		if !p.Declared {
			implicit = append(implicit, p.Name)
		}
	}
	if !declared {
		implicit = append(implicit, name)
	}
	var out []string
	for _, n := range implicit {
		if s := suggest(n, known); len(s) > 0 {
			out = append(out, n+" ("+didYouMean(s)+")")
		}
	}
	return strings.Join(out, ", ")
}

func ordinal(n int) string {
	words := []string{"zeroth", "first", "second", "third", "fourth", "fifth", "sixth", "seventh", "eighth", "ninth", "tenth"}
	if n < len(words) {
		return words[n]
	}
	return fmt.Sprintf("parameter number %d", n)
}

// define checks a definition and appends it to m.Defs.
func (c *checker) define(s *DefineStmt) {
	c.defining = s.Name
	shape, dep := c.expr(s.Value, true)
	c.defining = ""
	c.defs[s.Name] = len(c.m.Defs)
	c.m.Defs = append(c.m.Defs, Def{Name: s.Name, Value: s.Value, Shape: shape, DependsOnParams: dep, At: s.At})
}

// density checks the density statement.
func (c *checker) density(s *DensityStmt) {
	shape, _ := c.expr(s.Value, false)
	c.m.Density = s.Value
	if s.Cost {
		c.m.Form = Cost
	} else {
		c.m.Form = LogDensity
	}
	if shape.Len > 0 {
		c.errs.add(startPos(s.Value), "wrap it in sum(...) to add up the terms of the vector",
			"the density must be a scalar, but this is a vector of %d elements", shape.Len)
	}
}

// expr checks e and returns its shape and whether it depends on the
// parameters. vecOK says whether a vector literal may stand here.
func (c *checker) expr(e Expr, vecOK bool) (Shape, bool) {
	shape, dep := c.expr1(e, vecOK)
	c.m.Shapes[e] = shape
	return shape, dep
}

func (c *checker) expr1(e Expr, vecOK bool) (Shape, bool) {
	switch e := e.(type) {
	case *Number:
		return Shape{}, false
	case *Ident:
		return c.ident(e)
	case *Unary:
		return c.expr(e.X, false)
	case *Binary:
		sx, dx := c.expr(e.X, false)
		sy, dy := c.expr(e.Y, false)
		if sx == badShape || sy == badShape {
			return badShape, dx || dy
		}
		if sx.Len > 0 && sy.Len > 0 && sx.Len != sy.Len {
			c.errs.add(e.At, "elementwise operations need vectors of the same length, or a vector and a scalar",
				"vector lengths differ in '%c': the left side has %d elements, the right side %d", e.Op, sx.Len, sy.Len)
			return badShape, dx || dy
		}
		return Shape{Len: max(sx.Len, sy.Len)}, dx || dy
	case *Call:
		return c.call(e)
	case *Index:
		return c.index(e)
	case *Vector:
		if !vecOK {
			c.errs.add(e.At, "define it first, as in v = [1, 2, 3], and use v",
				"a vector literal may only be the whole right side of a definition or a function argument")
		}
		dep := false
		for i, el := range e.Elems {
			// A nested vector literal is reported as a non-scalar element only.
			s, d := c.expr(el, true)
			dep = dep || d
			if s.Len > 0 {
				c.errs.add(startPos(el), "", "the elements of a vector must be scalars, but element %d is a vector of %d elements", i+1, s.Len)
			}
		}
		return Shape{Len: len(e.Elems)}, dep
	}
	return badShape, false
}

// ident resolves a name used in an expression.
func (c *checker) ident(e *Ident) (Shape, bool) {
	if shape, dep, ok := c.local(e); ok {
		return shape, dep
	}
	if at, ok := c.blockComps[e.Name]; ok {
		c.errs.add(e.At, "a starting value may use only names defined above the block",
			"%s is a line of this block (line %d); it has no value before the first step", e.Name, at.Line)
		return badShape, false
	}
	if idx, ok := c.defs[e.Name]; ok && c.visibleDefs >= 0 && idx >= c.visibleDefs {
		c.errs.add(e.At, "a function body may use its arguments, the parameters and the definitions above the function",
			"%s is defined at line %d, below the function", e.Name, c.m.Defs[idx].At.Line)
		return badShape, false
	}
	if idx, ok := c.params[e.Name]; ok {
		e.Kind, e.Index = ParamRef, idx
		c.m.Params[idx].Used = true
		return Shape{}, true
	}
	if idx, ok := c.defs[e.Name]; ok {
		e.Kind, e.Index = DefRef, idx
		d := c.m.Defs[idx]
		return d.Shape, d.DependsOnParams
	}
	if e.Name == c.defining {
		c.errs.add(e.At, "a definition may use only earlier definitions", "%s is used in its own definition", e.Name)
		return badShape, false
	}
	if at, later := c.defAt[e.Name]; later {
		c.errs.add(e.At, fmt.Sprintf("move the definition of %s above this line", e.Name),
			"%s is used before its definition at line %d", e.Name, at.Line)
		return badShape, false
	}
	if f, ok := Funcs[e.Name]; ok {
		c.errs.add(e.At, "", "%s is a function; call it as %s(%s)", e.Name, e.Name, f.Args)
		return badShape, false
	}
	e.Kind, e.Index = ParamRef, c.addParam(e.Name, e.At, false)
	if e.Index < len(c.m.Params) {
		c.m.Params[e.Index].Used = true
	}
	return Shape{}, true
}

// call checks a function call.
func (c *checker) call(e *Call) (Shape, bool) {
	if idx, ok := c.funcs[e.Name]; ok && (c.visibleFuncs < 0 || idx < c.visibleFuncs) {
		return c.userCall(e, idx)
	}
	if at, ok := c.funcAt[e.Name]; ok {
		for _, a := range e.Args {
			c.expr(a, true)
		}
		c.errs.add(e.At, fmt.Sprintf("move the definition of %s above this line", e.Name),
			"%s is used before its definition at line %d", e.Name, at.Line)
		return badShape, false
	}
	info, known := Funcs[e.Name]
	shapes := make([]Shape, len(e.Args))
	dep := false
	bad := false
	for i, a := range e.Args {
		var d bool
		shapes[i], d = c.expr(a, true)
		dep = dep || d
		bad = bad || shapes[i] == badShape
	}
	if !known {
		c.notAFunction(e)
		return badShape, dep
	}
	n := len(e.Args)
	if n < info.MinArgs || (info.MaxArgs != Variadic && n > info.MaxArgs) {
		c.errs.add(e.At, fmt.Sprintf("%s takes %s (%s), got %d", e.Name, arity(info), info.Args, n),
			"wrong number of arguments for %s: got %d, want %s", e.Name, n, arityShort(info))
		return badShape, dep
	}
	if bad {
		return badShape, dep
	}
	if info.Kind == Reduction {
		if e.Name == "len" {
			dep = false // the length of a vector does not vary with the parameters
		}
		if n > 1 {
			for i, s := range shapes {
				if s.Len > 0 {
					hint := fmt.Sprintf("apply %s to each vector and then to the results, as in %s(%s(a), %s(b))", e.Name, e.Name, e.Name, e.Name)
					if e.Name == "logsumexp" {
						// A mixture's likelihood wants the terms element by
						// element, which the reduction does not give.
						hint = "for log(e^a + e^b) element by element (a mixture's terms per reading) write a + log1pexp(b - a); for one number from all the elements, logsumexp(logsumexp(a), logsumexp(b))"
					}
					c.errs.add(startPos(e.Args[i]), hint,
						"%s takes either one vector or several scalars, but argument %d of %d is a vector of %d elements", e.Name, i+1, n, s.Len)
					return badShape, dep
				}
			}
		}
		return Shape{}, dep
	}
	length, first := 0, 0
	for i, s := range shapes {
		if s.Len == 0 {
			continue
		}
		if length == 0 {
			length, first = s.Len, i
			continue
		}
		if s.Len != length {
			c.errs.add(startPos(e.Args[i]), "elementwise functions need vector arguments of the same length, or scalars",
				"arguments of %s differ in length: argument %d is a vector of %d elements, argument %d a vector of %d",
				e.Name, first+1, length, i+1, s.Len)
			return badShape, dep
		}
	}
	return Shape{Len: length}, dep
}

// arity says how many arguments a function takes: "3 arguments",
// "1 argument", "at least 1 argument".
func arity(f FuncInfo) string {
	plural := func(n int) string {
		if n == 1 {
			return "1 argument"
		}
		return fmt.Sprintf("%d arguments", n)
	}
	switch {
	case f.MaxArgs == Variadic:
		return "at least " + plural(f.MinArgs)
	case f.MinArgs == f.MaxArgs:
		return plural(f.MinArgs)
	}
	return fmt.Sprintf("%d to %d arguments", f.MinArgs, f.MaxArgs)
}

func arityShort(f FuncInfo) string {
	switch {
	case f.MaxArgs == Variadic:
		return fmt.Sprintf("at least %d", f.MinArgs)
	case f.MinArgs == f.MaxArgs:
		return fmt.Sprint(f.MinArgs)
	}
	return fmt.Sprintf("%d to %d", f.MinArgs, f.MaxArgs)
}

// notAFunction reports a call of something that is not a function.
func (c *checker) notAFunction(e *Call) {
	product := fmt.Sprintf("to multiply, write %s*(...)", e.Name)
	switch {
	case e.Name == "pi" || e.Name == "inf":
		c.errs.add(e.At, product, "%s is a constant, not a function", e.Name)
	case c.declAt[e.Name] != (Pos{}) || (c.free[e.Name] && c.defAt[e.Name] == (Pos{})):
		c.errs.add(e.At, product, "%s is a parameter, not a function", e.Name)
	case c.defAt[e.Name] == dataPos: // attached data (data.go)
		c.errs.add(e.At, product, "%s is a column of the attached data, not a function", e.Name)
	case c.defAt[e.Name] != (Pos{}):
		c.errs.add(e.At, product, "%s is defined at line %d as a quantity, not a function", e.Name, c.defAt[e.Name].Line)
	default:
		hint := didYouMean(suggest(e.Name, FuncNames()))
		if hint == "" {
			hint = "the functions are " + strings.Join(FuncNames(), ", ")
		}
		c.errs.add(e.At, hint, "unknown function %s", e.Name)
	}
}

// startPos returns the position where an expression's text starts (a
// binary expression's own position is its operator's).
func startPos(e Expr) Pos {
	for {
		b, ok := e.(*Binary)
		if !ok {
			return e.Pos()
		}
		e = b.X
	}
}
