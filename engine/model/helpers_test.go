package model

import (
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// dumpExpr writes an expression as a fully parenthesised tree without
// positions: (op X Y) for operators, name(args) for calls, [a b] for
// vectors. With kinds set, names carry their resolution (a@p0, t@d1).
func dumpExpr(e Expr, kinds bool) string {
	var b strings.Builder
	var walk func(Expr)
	walk = func(e Expr) {
		switch e := e.(type) {
		case *Number:
			if e.Text == "pi" || e.Text == "inf" {
				b.WriteString(e.Text)
			} else {
				b.WriteString(strconv.FormatFloat(e.Value, 'g', -1, 64))
			}
		case *Ident:
			b.WriteString(e.Name)
			if kinds {
				switch e.Kind {
				case ParamRef:
					fmt.Fprintf(&b, "@p%d", e.Index)
				case DefRef:
					fmt.Fprintf(&b, "@d%d", e.Index)
				case LocalRef:
					fmt.Fprintf(&b, "@l%d", e.Index)
				default:
					b.WriteString("@?")
				}
			}
		case *Unary:
			fmt.Fprintf(&b, "(%c ", e.Op)
			walk(e.X)
			b.WriteByte(')')
		case *Binary:
			fmt.Fprintf(&b, "(%c ", e.Op)
			walk(e.X)
			b.WriteByte(' ')
			walk(e.Y)
			b.WriteByte(')')
		case *Call:
			b.WriteString(e.Name + "(")
			for i, a := range e.Args {
				if i > 0 {
					b.WriteByte(' ')
				}
				walk(a)
			}
			b.WriteByte(')')
		case *Vector:
			b.WriteByte('[')
			for i, a := range e.Elems {
				if i > 0 {
					b.WriteByte(' ')
				}
				walk(a)
			}
			b.WriteByte(']')
		case *Index:
			b.WriteString("(index ")
			walk(e.X)
			if e.I != nil {
				b.WriteByte(' ')
				walk(e.I)
			} else {
				b.WriteByte(' ')
				walk(e.Lo)
				b.WriteByte(':')
				walk(e.Hi)
			}
			b.WriteByte(')')
		case nil:
			b.WriteString("<nil>")
		default:
			fmt.Fprintf(&b, "<%T>", e)
		}
	}
	walk(e)
	return b.String()
}

// dumpModel describes everything a compiler sees in a checked model,
// without positions: statements, parameters, definitions, shapes, form.
func dumpModel(m *Model) string {
	var b strings.Builder
	for _, st := range m.Stmts {
		switch s := st.(type) {
		case *ParamStmt:
			fmt.Fprintf(&b, "param %s", s.Name)
			if s.Lo != nil {
				fmt.Fprintf(&b, " [%s %s]", dumpExpr(s.Lo, true), dumpExpr(s.Hi, true))
			}
		case *DefineStmt:
			fmt.Fprintf(&b, "def %s %s", s.Name, dumpExpr(s.Value, true))
		case *DensityStmt:
			fmt.Fprintf(&b, "density cost=%v %s", s.Cost, dumpExpr(s.Value, true))
		case *FuncStmt:
			fmt.Fprintf(&b, "func %s%v %s", s.Name, s.Args, dumpExpr(s.Body, true))
		case *BlockStmt:
			fmt.Fprintf(&b, "block %s steps=%s times=%s start=%s sub=%s var=%s n=%d t=%v t0=%g s=%d",
				s.Kind.Keyword(), dumpExpr(s.Steps, true), dumpExpr(s.Times, true), dumpExpr(s.Start, true),
				dumpExpr(s.Substeps, true), s.Var, s.NSteps, s.TimeVals, s.StartVal, s.NSub)
			for _, l := range s.Lines {
				fmt.Fprintf(&b, "\n  %s@%d = %s ; %s", l.Name, l.Slot, dumpExpr(l.Init, true), dumpExpr(l.Rule, true))
			}
		}
		b.WriteByte('\n')
	}
	for i, p := range m.Params {
		fmt.Fprintf(&b, "p%d %s [%g %g] declared=%v\n", i, p.Name, p.Lo, p.Hi, p.Declared)
	}
	for i, d := range m.Defs {
		fmt.Fprintf(&b, "d%d %s len=%d dep=%v %s comp=%d\n", i, d.Name, d.Shape.Len, d.DependsOnParams, dumpExpr(d.Value, true), d.Comp)
	}
	fmt.Fprintf(&b, "form %s density %s\n", m.Form, dumpExpr(m.Density, true))
	return b.String()
}

// forEachExpr calls f on every expression node of the model's statements.
func forEachExpr(m *Model, f func(Expr)) {
	var walk func(Expr)
	walk = func(e Expr) {
		if e == nil {
			return
		}
		f(e)
		switch e := e.(type) {
		case *Unary:
			walk(e.X)
		case *Binary:
			walk(e.X)
			walk(e.Y)
		case *Call:
			for _, a := range e.Args {
				walk(a)
			}
		case *Vector:
			for _, a := range e.Elems {
				walk(a)
			}
		case *Index:
			walk(e.X)
			walk(e.I)
			walk(e.Lo)
			walk(e.Hi)
		}
	}
	for _, st := range m.Stmts {
		switch s := st.(type) {
		case *ParamStmt:
			walk(s.Lo)
			walk(s.Hi)
		case *DefineStmt:
			walk(s.Value)
		case *DensityStmt:
			walk(s.Value)
		case *BlockStmt:
			walk(s.Steps)
			walk(s.Times)
			walk(s.Start)
			walk(s.Substeps)
			for _, l := range s.Lines {
				walk(l.Init)
				walk(l.Rule)
			}
		case *FuncStmt:
			// A body is checked where the function is used, and not at all
			// when it is not.
		}
	}
}

// checkComplete fails the test unless every expression has a recorded
// shape, every name is resolved to a valid index, and the model's fields
// are consistent: what the compiler relies on.
func checkComplete(t *testing.T, m *Model) {
	t.Helper()
	forEachExpr(m, func(e Expr) {
		s, ok := m.Shapes[e]
		if !ok {
			t.Errorf("no shape for %s", dumpExpr(e, false))
		}
		if s.Len < 0 {
			t.Errorf("bad shape %d for %s", s.Len, dumpExpr(e, false))
		}
		id, ok := e.(*Ident)
		if !ok {
			return
		}
		switch id.Kind {
		case ParamRef:
			if id.Index < 0 || id.Index >= len(m.Params) || m.Params[id.Index].Name != id.Name {
				t.Errorf("%s resolved to parameter %d", id.Name, id.Index)
			}
		case DefRef:
			if id.Index < 0 || id.Index >= len(m.Defs) || m.Defs[id.Index].Name != id.Name {
				t.Errorf("%s resolved to definition %d", id.Name, id.Index)
			}
		case LocalRef:
			if id.Index < 0 {
				t.Errorf("%s resolved to slot %d", id.Name, id.Index)
			}
		default:
			t.Errorf("%s unresolved", id.Name)
		}
	})
	if m.Density == nil {
		t.Errorf("no density")
	} else if s := m.Shapes[m.Density]; !s.Scalar() {
		t.Errorf("density shape %d", s.Len)
	}
	for i, d := range m.Defs {
		if d.Block != nil {
			continue
		}
		if m.Shapes[d.Value] != d.Shape {
			t.Errorf("def %d %s: shape %v, expression shape %v", i, d.Name, d.Shape, m.Shapes[d.Value])
		}
	}
	if len(m.Params) < 1 || len(m.Params) > MaxParams {
		t.Errorf("%d parameters", len(m.Params))
	}
}

// readModelFiles reads the model files testdata/model/DIR/*.txt at the root
// of the repository, keyed by file name.
func readModelFiles(t *testing.T, dir string) map[string]string {
	t.Helper()
	paths, err := filepath.Glob(filepath.Join("..", "..", "testdata", "model", dir, "*.txt"))
	if err != nil {
		t.Fatal(err)
	}
	files := map[string]string{}
	for _, p := range paths {
		b, err := os.ReadFile(p)
		if err != nil {
			t.Fatal(err)
		}
		files[filepath.Base(p)] = string(b)
	}
	return files
}
