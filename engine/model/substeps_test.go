package model

import "testing"

// The copy's ode block takes twice the substeps and its components' definitions
// name the copied block; the original keeps its own, and a model without an ode
// block comes back as it is.
func TestWithSubsteps(t *testing.T) {
	m, err := Parse("t = [1, 2]\nparam k in [0, inf]\node t from 0 substeps 3\n  u = 1 rate -k*u\nend\nsum(-(u - 0.5)^2)\n")
	if err != nil {
		t.Fatal(err)
	}
	m2, ok := WithSubsteps(m, 2)
	if !ok {
		t.Fatal("no ode block found")
	}
	var orig, cp *BlockStmt
	for _, st := range m.Stmts {
		if b, ok := st.(*BlockStmt); ok {
			orig = b
		}
	}
	for _, st := range m2.Stmts {
		if b, ok := st.(*BlockStmt); ok {
			cp = b
		}
	}
	if orig == nil || cp == nil || orig == cp || orig.NSub != 3 || cp.NSub != 6 {
		t.Fatalf("blocks %p (%d substeps) and %p (%d): want two blocks, 3 and 6", orig, orig.NSub, cp, cp.NSub)
	}
	for i, d := range m2.Defs {
		if d.Block != nil && d.Block != cp {
			t.Errorf("definition %s names the original block", d.Name)
		}
		if m.Defs[i].Block != nil && m.Defs[i].Block != orig {
			t.Errorf("the original's definition %s changed", d.Name)
		}
	}
	plain, _ := Parse("param x\n-x^2/2\n")
	if p2, ok := WithSubsteps(plain, 2); ok || p2 != plain {
		t.Error("a model without an ode block was copied")
	}
}
