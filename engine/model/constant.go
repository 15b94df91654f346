package model

import (
	"fmt"
	"math"
	"strconv"
)

// Constant returns the value of the scalar constant named name: a
// definition in the model's text (not attached data) whose value is made
// of numbers, the operators + - * / ^ and other such constants only, so
// that it depends on no parameter. It is the kind of definition
// WithConstant may set.
func (m *Model) Constant(name string) (float64, error) {
	idx := -1
	for i, d := range m.Defs {
		if d.Name == name {
			idx = i
		}
	}
	if idx < 0 {
		for _, p := range m.Params {
			if p.Name == name {
				return 0, fmt.Errorf("model: %s is a parameter, not a constant", name)
			}
		}
		return 0, fmt.Errorf("model: the model defines no constant %s", name)
	}
	d := m.Defs[idx]
	switch {
	case d.IsData():
		return 0, fmt.Errorf("model: %s is a column of the attached data, not a constant", name)
	case !d.Shape.Scalar():
		return 0, fmt.Errorf("model: %s (line %d) is a vector; only a scalar constant can be set", name, d.At.Line)
	case d.DependsOnParams:
		return 0, fmt.Errorf("model: %s (line %d) depends on the parameters; only a constant can be set", name, d.At.Line)
	}
	v, ok := m.constValue(d.Value, 0)
	if !ok {
		return 0, fmt.Errorf("model: %s (line %d) is not a plain number: its value must be made of numbers and + - * / ^ only to be set", name, d.At.Line)
	}
	return v, nil
}

// constValue folds an expression of numbers, operators and constant
// definitions.
func (m *Model) constValue(e Expr, depth int) (float64, bool) {
	if depth > MaxDepth {
		return 0, false
	}
	switch e := e.(type) {
	case *Number:
		return e.Value, true
	case *Unary:
		v, ok := m.constValue(e.X, depth+1)
		if e.Op == '-' {
			v = -v
		}
		return v, ok
	case *Binary:
		x, okX := m.constValue(e.X, depth+1)
		y, okY := m.constValue(e.Y, depth+1)
		return arith(e.Op, x, y), okX && okY
	case *Ident:
		if e.Kind == DefRef && e.Index >= 0 && e.Index < len(m.Defs) && !m.Defs[e.Index].IsData() {
			return m.constValue(m.Defs[e.Index].Value, depth+1)
		}
	}
	return 0, false
}

// WithConstant returns the model with the scalar constant name (see
// Constant) set to value, without retyping the text: the text is read
// again with that definition's expression replaced by the number, and the
// attached data kept. The new model's Source is the text as written (it
// still shows the old value); m is not changed. Everything that depends on
// the constant (other definitions, a parameter's support) follows the new
// value.
func WithConstant(m *Model, name string, value float64) (*Model, error) {
	if m == nil {
		return nil, fmt.Errorf("model: no model")
	}
	if _, err := m.Constant(name); err != nil {
		return nil, err
	}
	if math.IsNaN(value) || math.IsInf(value, 0) {
		return nil, fmt.Errorf("model: %s = %v: the value must be a finite number", name, value)
	}
	var data []Data
	for _, d := range m.Defs {
		if !d.IsData() {
			continue
		}
		vec, ok := d.Value.(*Vector)
		if !ok {
			return nil, fmt.Errorf("model: attached data %s is not a vector", d.Name)
		}
		vals := make([]float64, len(vec.Elems))
		for i, el := range vec.Elems {
			n, ok := el.(*Number)
			if !ok {
				return nil, fmt.Errorf("model: attached data %s holds a non-number", d.Name)
			}
			vals[i] = n.Value
		}
		data = append(data, Data{Name: d.Name, Values: vals})
	}
	lim := defaultLimits
	errs := &errorSink{}
	toks := scanAll(m.Source, errs)
	p := &parser{toks: toks, errs: errs, lim: lim}
	p.file()
	if err := errs.err(); err != nil {
		return nil, err
	}
	set := false
	for _, st := range p.stmts {
		if s, ok := st.(*DefineStmt); ok && s.Name == name {
			s.Value = &Number{At: startPos(s.Value), Value: value, Text: strconv.FormatFloat(value, 'g', -1, 64)}
			set = true
		}
	}
	if !set {
		return nil, fmt.Errorf("model: no definition of %s in the text", name)
	}
	m2 := &Model{Source: m.Source, Stmts: p.stmts, Shapes: make(map[Expr]Shape, len(toks)/2)}
	text := bindData(m2, data, errs)
	check(m2, toks[len(toks)-1].pos, errs, lim)
	m2.Stmts = text
	if err := errs.err(); err != nil {
		return nil, err
	}
	return m2, nil
}
