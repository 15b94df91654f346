package model

import "fmt"

// The forms added for dynamics, in EBNF (see parser.go for the rest):
//
//	stmt      = ... | funcdef | block .
//	funcdef   = name "(" name { "," name } ")" "=" expr .
//	block     = ( "repeat" expr | "ode" expr "from" expr "substeps" expr )
//	            [ "as" name ] newline { line newline } "end" .
//	line      = name "=" expr [ ( "then" | "rate" ) expr ] .
//	power     = postfix [ "^" unary ] .
//	postfix   = primary { "[" ( expr | expr ":" expr ) "]" } .
//
// repeat, ode, from, substeps, as, then, rate and end are words only where
// they stand in these forms, so they remain free as names elsewhere.

// blockStart reports whether token i starts a block: repeat or ode followed
// by a number or a name.
func (p *parser) blockStart(i int) (BlockKind, bool) {
	t := p.toks[i]
	if t.kind != tokName {
		return 0, false
	}
	next := p.toks[i+1].kind
	if next != tokNumber && next != tokName {
		return 0, false
	}
	switch t.text {
	case "repeat":
		return Recurrence, true
	case "ode":
		return ODE, true
	}
	return 0, false
}

// loopWord reports a statement that starts the way loops do in other
// languages (for i in 1:10, while ...), and says what to write instead.
func (p *parser) loopWord(t token) {
	if t.kind != tokName || (t.text != "for" && t.text != "while") {
		return
	}
	if n := p.toks[p.i+1].kind; n != tokName && n != tokLParen {
		return
	}
	p.fail(t.pos, "to step a state, write a repeat block:\n"+
		"    repeat 10 as k\n      x = 1 then x + h*f(x)\n    end\n"+
		"and for a sum over data, sum(...) of a vector expression",
		"the model language has no %s loop", t.text)
}

// isFuncDef reports whether the statement at token i is NAME(...) = ...
func (p *parser) isFuncDef(i int) bool {
	if p.toks[i].kind != tokName || p.toks[i+1].kind != tokLParen {
		return false
	}
	depth := 0
	for j := i + 1; ; j++ {
		switch p.toks[j].kind {
		case tokEOF, tokSemi:
			return false
		case tokLParen:
			depth++
		case tokRParen:
			depth--
			if depth == 0 {
				return p.toks[j+1].kind == tokAssign
			}
		}
	}
}

// funcStmt parses NAME(ARG, ...) = EXPR.
func (p *parser) funcStmt() *FuncStmt {
	name := p.next()
	open := p.next()
	p.nest++
	st := &FuncStmt{At: name.pos, Name: name.text}
	for {
		t := p.cur()
		if t.kind != tokName {
			p.fail(t.pos, "a function is defined as NAME(ARG, ...) = EXPR, with names as arguments, as in f(x, y) = x*y",
				"expected an argument name in the definition of %s, found %s", name.text, t.describe())
		}
		for _, a := range st.Args {
			if a == t.text {
				p.fail(t.pos, "give each argument its own name", "argument %s appears twice in the definition of %s", t.text, name.text)
			}
		}
		p.next()
		st.Args = append(st.Args, t.text)
		st.ArgsAt = append(st.ArgsAt, t.pos)
		t = p.cur()
		if t.kind == tokComma {
			p.next()
			continue
		}
		if t.kind != tokRParen {
			p.closeErr("',' or ')'", open, "")
		}
		break
	}
	p.next()
	p.nest--
	p.next() // '=', checked by isFuncDef
	st.Body = p.expr("after '='")
	return st
}

// word reports whether the next token is the name w (a word of a block).
func (p *parser) word(w string) bool {
	t := p.cur()
	return t.kind == tokName && t.text == w
}

// expectWord consumes the name w or reports what the header should be.
func (p *parser) expectWord(w, form string) {
	if t := p.cur(); !p.word(w) {
		p.fail(t.pos, "an ode block starts "+form, "expected %s in the ode line, found %s", w, t.describe())
	}
	p.next()
}

const odeForm = "ode TIMES from T0 substeps S [as t]"

// block parses a repeat or ode block up to its end.
func (p *parser) block(kind BlockKind) *BlockStmt {
	kw := p.next()
	b := &BlockStmt{At: kw.pos, Kind: kind}
	if kind == Recurrence {
		b.Steps = p.expr("for the number of steps after repeat")
	} else {
		b.Times = p.expr("for the output times after ode")
		p.expectWord("from", odeForm)
		b.Start = p.expr("for the starting time after from")
		p.expectWord("substeps", odeForm)
		b.Substeps = p.expr("for the number of substeps")
	}
	if p.word("as") {
		p.next()
		t := p.cur()
		if t.kind != tokName {
			p.fail(t.pos, "", "expected a name after as, found %s", t.describe())
		}
		p.next()
		b.Var, b.VarAt = t.text, t.pos
	}
	if t := p.cur(); t.kind != tokNewline && t.kind != tokSemi {
		form := "repeat N [as k]"
		if kind == ODE {
			form = odeForm
		}
		p.fail(t.pos, "the first line of a block is "+form+"; its lines follow on lines of their own, then end",
			"expected the end of the %s line, found %s", kind.Keyword(), t.describe())
	}
	for {
		for k := p.toks[p.i].kind; k == tokNewline || k == tokSemi; k = p.toks[p.i].kind {
			p.i++
		}
		t := p.toks[p.i]
		if t.kind == tokEOF {
			p.fail(kw.pos, "close the block with end on a line of its own",
				"the %s block has no end", kind.Keyword())
		}
		if t.kind == tokName && t.text == "end" && p.toks[p.i+1].kind != tokAssign {
			p.next()
			return b
		}
		if p.errs.full() {
			panic(bailout{})
		}
		p.blockLine(b)
	}
}

// blockLine parses one line of a block; an error abandons the line only.
func (p *parser) blockLine(b *BlockStmt) {
	defer func() {
		if r := recover(); r != nil {
			if _, ok := r.(bailout); !ok {
				panic(r)
			}
			p.sync()
		}
	}()
	word := b.Kind.Word()
	t := p.cur()
	if t.kind != tokName || p.toks[p.i+1].kind != tokAssign {
		p.loopWord(t)
		p.fail(t.pos, fmt.Sprintf("each line of a %s block is NAME = START %s EXPR (a state component) or NAME = EXPR (a quantity of the step); end closes the block",
			b.Kind.Keyword(), word), "expected a line of the %s block or end, found %s", b.Kind.Keyword(), t.describe())
	}
	p.next()
	p.next()
	line := &BlockLine{At: t.pos, Name: t.text}
	first := p.expr("after '='")
	other := Recurrence
	if b.Kind == Recurrence {
		other = ODE
	}
	switch {
	case p.word(word):
		p.next()
		line.Init = first
		line.Rule = p.expr("after " + word)
	case p.word(other.Word()):
		w := p.cur()
		p.fail(w.pos, fmt.Sprintf("in a %s block a state component is NAME = START %s EXPR", b.Kind.Keyword(), word),
			"%s belongs in %s block", other.Word(), withArticle(other.Keyword()))
	default:
		line.Rule = first
	}
	if t := p.cur(); t.kind != tokNewline && t.kind != tokSemi && t.kind != tokEOF {
		hint := fmt.Sprintf("a line of the block is NAME = START %s EXPR or NAME = EXPR", word)
		if prev := p.toks[p.i-1]; (prev.kind == tokNumber || prev.kind == tokName || prev.kind == tokRParen) &&
			(t.kind == tokName || t.kind == tokNumber || t.kind == tokLParen) {
			hint = "for a product write '*' between the factors"
		}
		p.fail(t.pos, hint, "expected an operator or the end of the line, found %s", t.describe())
	}
	b.Lines = append(b.Lines, line)
}

// postfix parses the indexing that may follow a primary: x[2], x[v], x[2:5].
func (p *parser) postfix(x Expr) Expr {
	for p.cur().kind == tokLBrack {
		open := p.next()
		p.nest++
		ix := &Index{At: open.pos, X: x}
		if t := p.cur(); t.kind == tokRBrack {
			p.fail(t.pos, "write v[2] for the second element, v[idx] for those at the positions in idx, v[2:5] for a slice",
				"empty index")
		}
		first := p.expr("for the index")
		if p.cur().kind == tokColon {
			p.next()
			ix.Lo = first
			ix.Hi = p.expr("after ':' in a slice")
		} else {
			ix.I = first
		}
		if t := p.cur(); t.kind != tokRBrack {
			hint := ""
			if t.kind == tokComma {
				hint = "a vector has one index; for several elements give a vector of positions, as in v[[1, 3]]"
			}
			p.closeErr("']'", open, hint)
		}
		p.next()
		p.nest--
		x = ix
	}
	return x
}

// withArticle returns "a repeat" or "an ode".
func withArticle(kw string) string {
	if kw == "ode" {
		return "an ode"
	}
	return "a " + kw
}
