package model

import (
	"strconv"
	"strings"
)

// Format returns the canonical text of a parsed model: one statement per
// line, single spaces around binary + and - (none around * / ^), the fewest
// parentheses the precedence allows, numbers in their shortest exact form,
// comments dropped. Parsing the result gives the same model.
func Format(m *Model) string {
	var b strings.Builder
	for _, st := range m.Stmts {
		writeStmt(&b, st)
		b.WriteByte('\n')
	}
	return b.String()
}

// FormatExpr returns the canonical text of an expression.
func FormatExpr(e Expr) string {
	var b strings.Builder
	writeExpr(&b, e)
	return b.String()
}

func writeStmt(b *strings.Builder, st Stmt) {
	switch s := st.(type) {
	case *ParamStmt:
		b.WriteString("param ")
		b.WriteString(s.Name)
		if s.Lo != nil && s.Hi != nil {
			b.WriteString(" in [")
			writeExpr(b, s.Lo)
			b.WriteString(", ")
			writeExpr(b, s.Hi)
			b.WriteByte(']')
		}
	case *DefineStmt:
		b.WriteString(s.Name)
		b.WriteString(" = ")
		writeExpr(b, s.Value)
	case *DensityStmt:
		if s.Cost {
			b.WriteString("cost ")
		}
		writeExpr(b, s.Value)
	case *FuncStmt:
		b.WriteString(s.Name)
		b.WriteByte('(')
		b.WriteString(strings.Join(s.Args, ", "))
		b.WriteString(") = ")
		writeExpr(b, s.Body)
	case *BlockStmt:
		writeBlock(b, s)
	}
}

// writeBlock writes a block: its first line, each line indented by two
// spaces, and end.
func writeBlock(b *strings.Builder, s *BlockStmt) {
	b.WriteString(s.Kind.Keyword())
	b.WriteByte(' ')
	if s.Kind == ODE {
		writeExpr(b, s.Times)
		b.WriteString(" from ")
		writeExpr(b, s.Start)
		b.WriteString(" substeps ")
		writeExpr(b, s.Substeps)
	} else {
		writeExpr(b, s.Steps)
	}
	if s.Var != "" {
		b.WriteString(" as ")
		b.WriteString(s.Var)
	}
	b.WriteByte('\n')
	for _, l := range s.Lines {
		b.WriteString("  ")
		b.WriteString(l.Name)
		b.WriteString(" = ")
		if l.Init != nil {
			writeExpr(b, l.Init)
			b.WriteByte(' ')
			b.WriteString(s.Kind.Word())
			b.WriteByte(' ')
		}
		writeExpr(b, l.Rule)
		b.WriteByte('\n')
	}
	b.WriteString("end")
}

// Precedence levels, loosest first.
const (
	precAdd     = 1 // binary + -
	precMul     = 2 // * /
	precUnary   = 3 // prefix - +
	precPow     = 4 // ^
	precPrimary = 5 // numbers, names, calls, vectors
)

func precedence(e Expr) int {
	switch e := e.(type) {
	case *Binary:
		switch e.Op {
		case '+', '-':
			return precAdd
		case '*', '/':
			return precMul
		}
		return precPow
	case *Unary:
		return precUnary
	case *Number:
		if e.Value < 0 {
			// Not made by the parser, but print it so that it reads back.
			return precUnary
		}
	}
	return precPrimary
}

// writeOperand writes e, in parentheses when its precedence is below min.
func writeOperand(b *strings.Builder, e Expr, min int) {
	if precedence(e) < min {
		b.WriteByte('(')
		writeExpr(b, e)
		b.WriteByte(')')
		return
	}
	writeExpr(b, e)
}

func writeExpr(b *strings.Builder, e Expr) {
	switch e := e.(type) {
	case *Number:
		switch e.Text {
		case "pi", "inf":
			b.WriteString(e.Text)
		default:
			b.WriteString(strconv.FormatFloat(e.Value, 'g', -1, 64))
		}
	case *Ident:
		b.WriteString(e.Name)
	case *Unary:
		b.WriteByte(e.Op)
		// The operand of a prefix operator is itself a prefix expression or
		// a power: -x^2 is -(x^2).
		writeOperand(b, e.X, precUnary)
	case *Binary:
		p := precedence(e)
		if e.Op == '^' {
			// Right-associative; the base is a primary and the exponent a
			// prefix expression.
			writeOperand(b, e.X, precPrimary)
			b.WriteByte('^')
			writeOperand(b, e.Y, precUnary)
			return
		}
		// Left-associative: the right operand needs parentheses at equal
		// precedence (a - (b - c)).
		writeOperand(b, e.X, p)
		if p == precAdd {
			b.WriteByte(' ')
			b.WriteByte(e.Op)
			b.WriteByte(' ')
		} else {
			b.WriteByte(e.Op)
		}
		writeOperand(b, e.Y, p+1)
	case *Call:
		b.WriteString(e.Name)
		b.WriteByte('(')
		for i, a := range e.Args {
			if i > 0 {
				b.WriteString(", ")
			}
			writeExpr(b, a)
		}
		b.WriteByte(')')
	case *Vector:
		b.WriteByte('[')
		for i, a := range e.Elems {
			if i > 0 {
				b.WriteString(", ")
			}
			writeExpr(b, a)
		}
		b.WriteByte(']')
	case *Index:
		writeOperand(b, e.X, precPrimary)
		b.WriteByte('[')
		if e.I != nil {
			writeExpr(b, e.I)
		} else {
			writeExpr(b, e.Lo)
			b.WriteByte(':')
			writeExpr(b, e.Hi)
		}
		b.WriteByte(']')
	}
}
