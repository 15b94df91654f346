package model

// WithSubsteps returns a copy of m whose ode blocks take factor times
// their Runge-Kutta substeps between output times, and whether m has an
// ode block at all (when it has none, m itself comes back). m is not
// changed: the copy shares its expressions, lines and shapes, with its own
// blocks and definitions (a state component's definition names its
// block). Comparing the two models' log-densities at a point estimates
// the error of the integration there.
func WithSubsteps(m *Model, factor int) (*Model, bool) {
	if m == nil || factor < 1 {
		return m, false
	}
	copies := map[*BlockStmt]*BlockStmt{}
	stmts := make([]Stmt, len(m.Stmts))
	for i, st := range m.Stmts {
		stmts[i] = st
		if b, ok := st.(*BlockStmt); ok && b.Kind == ODE {
			c := *b
			c.NSub = b.NSub * factor
			copies[b] = &c
			stmts[i] = &c
		}
	}
	if len(copies) == 0 {
		return m, false
	}
	out := *m
	out.Stmts = stmts
	out.Defs = make([]Def, len(m.Defs))
	for i, d := range m.Defs {
		if c, ok := copies[d.Block]; ok {
			d.Block = c
		}
		out.Defs[i] = d
	}
	return &out, true
}
