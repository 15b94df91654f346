package model

import (
	"fmt"
	"math"
)

// paramBounds checks and evaluates a declared parameter's support.
func (c *checker) paramBounds(s *ParamStmt) {
	if s.Lo == nil {
		return
	}
	idx := c.params[s.Name]
	lo, okLo := c.bound(s.Lo, s.Name)
	hi, okHi := c.bound(s.Hi, s.Name)
	if !okLo || !okHi {
		return
	}
	p := &c.m.Params[idx]
	p.Lo, p.Hi = lo, hi
	if !(lo < hi) {
		c.errs.add(startPos(s.Lo), "the support is [LO, HI] with LO < HI; use -inf and inf for no bound",
			"empty support for %s: the lower bound %s is not less than the upper bound %s", s.Name, fmtNum(lo), fmtNum(hi))
	}
}

func fmtNum(v float64) string {
	switch {
	case math.IsInf(v, 1):
		return "inf"
	case math.IsInf(v, -1):
		return "-inf"
	}
	return fmt.Sprintf("%g", v)
}

// bound checks one bound of parameter name: a constant scalar expression of
// numbers, pi, inf, the operators and earlier constant definitions. It
// returns the bound's value.
func (c *checker) bound(e Expr, name string) (float64, bool) {
	const allowed = "a bound may use numbers, pi, inf, + - * / ^, elements of data and earlier definitions made of those"
	c.m.Shapes[e] = Shape{}
	switch e := e.(type) {
	case *Number:
		return e.Value, true
	case *Unary:
		v, ok := c.bound(e.X, name)
		if e.Op == '-' {
			v = -v
		}
		return v, ok
	case *Binary:
		x, okX := c.bound(e.X, name)
		y, okY := c.bound(e.Y, name)
		if !okX || !okY {
			return 0, false
		}
		v := arith(e.Op, x, y)
		if math.IsNaN(v) {
			c.errs.add(e.At, "", "the bound of %s is not a number: %s %c %s is undefined", name, fmtNum(x), e.Op, fmtNum(y))
			return 0, false
		}
		return v, true
	case *Call:
		c.errs.add(e.At, allowed, "a bound cannot call a function (%s)", e.Name)
		return 0, false
	case *Vector:
		c.errs.add(e.At, "a support is [LO, HI] with two scalar bounds", "a bound must be a scalar, not a vector")
		return 0, false
	case *Index:
		shape, dep := c.expr(e, false)
		if shape == badShape {
			return 0, false
		}
		v, ok := c.static(e)
		switch {
		case dep || !ok:
			c.errs.add(e.At, allowed, "a bound must be constant")
			return 0, false
		case v.vec:
			c.errs.add(e.At, "a support is [LO, HI] with two scalar bounds", "a bound must be a scalar, not a vector of %d elements", len(v.v))
			return 0, false
		}
		return v.v[0], true
	case *Ident:
		if idx, ok := c.params[e.Name]; ok {
			e.Kind, e.Index = ParamRef, idx
			c.errs.add(e.At, allowed, "a bound must be constant, but %s is a parameter", e.Name)
			return 0, false
		}
		idx, ok := c.defs[e.Name]
		if !ok {
			c.unknownInBound(e, allowed)
			return 0, false
		}
		e.Kind, e.Index = DefRef, idx
		d := c.m.Defs[idx]
		switch {
		case !d.Shape.Scalar():
			c.errs.add(e.At, "a support is [LO, HI] with two scalar bounds",
				"a bound must be a scalar, but %s is a vector of %d elements", e.Name, d.Shape.Len)
			return 0, false
		case d.DependsOnParams:
			c.errs.add(e.At, allowed, "a bound must be constant, but %s depends on the parameters", e.Name)
			return 0, false
		}
		v, ok := c.constant(idx)
		if !ok {
			if sv, sok := c.staticDef(idx); sok && !sv.vec {
				return sv.v[0], true
			}
			c.errs.add(e.At, allowed, "cannot use %s in a bound: it is not made of numbers and operators only", e.Name)
		}
		return v, ok
	}
	return 0, false
}

// unknownInBound reports a name in a bound that is not an earlier definition.
func (c *checker) unknownInBound(e *Ident, allowed string) {
	if at, later := c.defAt[e.Name]; later {
		c.errs.add(e.At, fmt.Sprintf("move the definition of %s above this line", e.Name),
			"%s is used before its definition at line %d", e.Name, at.Line)
		return
	}
	if f, ok := Funcs[e.Name]; ok {
		c.errs.add(e.At, allowed, "%s is a function; call it as %s(%s)", e.Name, e.Name, f.Args)
		return
	}
	c.errs.add(e.At, allowed+"; a bound cannot depend on a parameter", "unknown name %s in the bound", e.Name)
}

func arith(op byte, x, y float64) float64 {
	switch op {
	case '+':
		return x + y
	case '-':
		return x - y
	case '*':
		return x * y
	case '/':
		return x / y
	}
	return math.Pow(x, y)
}

// constant returns the value of definition idx when it is made of numbers,
// operators and other such definitions only.
func (c *checker) constant(idx int) (float64, bool) {
	if done, ok := c.constDone[idx]; ok {
		return c.constVal[idx], done
	}
	v, ok := c.constExpr(c.m.Defs[idx].Value)
	c.constDone[idx] = ok
	c.constVal[idx] = v
	return v, ok
}

func (c *checker) constExpr(e Expr) (float64, bool) {
	switch e := e.(type) {
	case *Number:
		return e.Value, true
	case *Unary:
		v, ok := c.constExpr(e.X)
		if e.Op == '-' {
			v = -v
		}
		return v, ok
	case *Binary:
		x, okX := c.constExpr(e.X)
		y, okY := c.constExpr(e.Y)
		return arith(e.Op, x, y), okX && okY
	case *Ident:
		if e.Kind == DefRef {
			return c.constant(e.Index)
		}
	}
	return 0, false
}
