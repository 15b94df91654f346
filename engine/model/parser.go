package model

import (
	"fmt"
	"math"
	"strings"
	"unicode/utf8"
)

// limits are the limits of the language; tests lower them to reach them
// with small inputs.
type limits struct {
	maxSource int
	maxDepth  int
	maxVector int
	maxParams int
}

var defaultLimits = limits{
	maxSource: MaxSource,
	maxDepth:  MaxDepth,
	maxVector: MaxVectorLen,
	maxParams: MaxParams,
}

// Parse scans, parses and checks a model. On failure it returns nil and an
// ErrorList (sorted by position, at most ten errors); use Detail to show
// them with the offending lines.
func Parse(src string) (*Model, error) {
	return parse(src, defaultLimits)
}

func parse(src string, lim limits, data ...Data) (*Model, error) {
	errs := &errorSink{}
	if len(src) > lim.maxSource {
		errs.add(posAt(src, lim.maxSource),
			"split the data into a smaller sample, or summarise it (for instance by counts)",
			"model text is too long: %d bytes, the limit is %d", len(src), lim.maxSource)
		return nil, errs.err()
	}
	toks := scanAll(src, errs)
	p := &parser{toks: toks, errs: errs, lim: lim}
	p.file()
	if err := errs.err(); err != nil {
		return nil, err
	}
	m := &Model{Source: src, Stmts: p.stmts, Shapes: make(map[Expr]Shape, len(toks)/2)}
	text := bindData(m, data, errs) // attached data (data.go), defined first
	check(m, toks[len(toks)-1].pos, errs, lim)
	m.Stmts = text
	if err := errs.err(); err != nil {
		return nil, err
	}
	return m, nil
}

// posAt returns the position of byte offset off in src. Like the scanner,
// it does not count a byte-order mark at the start as a column.
func posAt(src string, off int) Pos {
	pos := Pos{Line: 1, Col: 1}
	if strings.HasPrefix(src, bom) && off >= len(bom) {
		pos.Offset = len(bom)
	}
	for pos.Offset < off && pos.Offset < len(src) {
		r, size := utf8.DecodeRuneInString(src[pos.Offset:])
		pos.Offset += size
		if r == '\n' {
			pos.Line++
			pos.Col = 1
		} else {
			pos.Col++
		}
	}
	return pos
}

// The grammar, in EBNF; a line break ends a statement except inside ( )
// and [ ], where it is white space (unless the next line starts with param,
// cost or NAME =, which shows that a bracket was left open):
//
//	model     = [ stmt ] { ( newline | ";" ) [ stmt ] } .
//	stmt      = "param" name [ "in" "[" expr "," expr "]" ]
//	          | name "=" expr
//	          | "cost" expr
//	          | expr .
//	expr      = term { ( "+" | "-" ) term } .
//	term      = unary { ( "*" | "/" ) unary } .
//	unary     = ( "-" | "+" ) unary | power .
//	power     = primary [ "^" unary ] .
//	primary   = number | name | name "(" [ expr { "," expr } ] ")"
//	          | "(" expr ")" | "[" expr { "," expr } [ "," ] "]" .
//
// So ^ binds tighter than a prefix minus (-x^2 = -(x^2)), is right-
// associative (2^3^2 = 2^9) and takes a signed exponent (2^-1); the other
// binary operators are left-associative. The names pi and inf are numbers.
// A vector literal may stand only as the whole right side of a definition
// or as a whole function argument (the checker reports it elsewhere), and
// its elements must be scalars.

// parser is a recursive-descent parser over the whole token list. An error
// inside a statement abandons that statement (bailout) and parsing goes on
// with the next one.
type parser struct {
	toks  []token
	i     int // index of the next token
	nest  int // open ( and [ : newlines inside them are white space
	depth int // nesting of expressions, against lim.maxDepth
	errs  *errorSink
	lim   limits
	stmts []Stmt
}

// bailout abandons the statement being parsed; the error is already recorded.
type bailout struct{}

// cur returns the next significant token without consuming it.
func (p *parser) cur() token {
	if p.nest > 0 {
		// A line break inside brackets is white space, unless the next line
		// starts a statement: then a bracket was left open, and the line
		// break is where the statement ends.
		j := p.i
		for p.toks[j].kind == tokNewline {
			j++
		}
		if !p.startsStatement(j) {
			p.i = j
		}
	}
	t := p.toks[p.i]
	if t.kind == tokIllegal {
		// The scanner has reported it.
		panic(bailout{})
	}
	return t
}

// next consumes and returns the next significant token.
func (p *parser) next() token {
	t := p.cur()
	if t.kind != tokEOF {
		p.i++
	}
	return t
}

// fail records an error and abandons the statement.
func (p *parser) fail(pos Pos, hint, format string, args ...any) {
	p.errs.add(pos, hint, format, args...)
	panic(bailout{})
}

// file parses every statement.
func (p *parser) file() {
	for !p.errs.full() {
		switch p.toks[p.i].kind {
		case tokEOF:
			return
		case tokNewline, tokSemi:
			p.i++
			continue
		}
		p.statement()
	}
}

// statement parses one statement and checks that it ends there.
func (p *parser) statement() {
	defer func() {
		if r := recover(); r != nil {
			if _, ok := r.(bailout); !ok {
				panic(r)
			}
			p.sync()
		}
	}()
	t := p.cur()
	var st Stmt
	if (t.kind == tokParam || t.kind == tokCost || t.kind == tokIn) && p.toks[p.i+1].kind == tokAssign {
		p.fail(t.pos, "choose another name", "cannot define %s: it is a keyword", t.text)
	}
	switch {
	case t.kind == tokParam:
		st = p.paramStmt()
	case t.kind == tokCost:
		p.next()
		st = &DensityStmt{At: t.pos, Cost: true, Value: p.expr("after cost")}
	case t.kind == tokName && p.toks[p.i+1].kind == tokAssign:
		p.next()
		p.next()
		st = &DefineStmt{At: t.pos, Name: t.text, Value: p.expr("after '='")}
	default:
		st = &DensityStmt{At: t.pos, Value: p.expr("")}
	}
	p.endOfStatement(st)
	p.stmts = append(p.stmts, st)
}

// sync skips to the end of the abandoned statement: the next ';', or the
// next line break outside the brackets still open.
func (p *parser) sync() {
	depth := p.nest
	p.nest, p.depth = 0, 0
	for {
		switch p.toks[p.i].kind {
		case tokEOF, tokSemi:
			return
		case tokNewline:
			if depth <= 0 {
				return
			}
			j := p.i
			for p.toks[j].kind == tokNewline {
				j++
			}
			if p.startsStatement(j) {
				return // a bracket was left open; the next statement starts here
			}
		case tokLParen, tokLBrack:
			depth++
		case tokRParen, tokRBrack:
			depth--
		}
		p.i++
	}
}

// endOfStatement checks that the statement ends at the next token.
func (p *parser) endOfStatement(st Stmt) {
	t := p.cur()
	switch t.kind {
	case tokEOF, tokNewline, tokSemi:
		return
	case tokAssign:
		hint := "a definition is NAME = EXPR, with a single name on the left"
		if d, ok := st.(*DensityStmt); ok {
			if _, call := d.Value.(*Call); call {
				hint = "there are no user-defined functions; define a quantity instead, as NAME = EXPR"
			}
		}
		p.fail(t.pos, hint, "unexpected '=': only a name can be defined")
	case tokRParen:
		p.fail(t.pos, "", "unexpected ')' with no '(' to close")
	case tokRBrack:
		p.fail(t.pos, "", "unexpected ']' with no '[' to close")
	case tokComma:
		hint := ""
		if _, ok := st.(*ParamStmt); ok {
			hint = "declare one parameter per statement, as in param a; param b"
		}
		p.fail(t.pos, hint, "unexpected ',' after the end of the statement")
	}
	if _, ok := st.(*ParamStmt); ok {
		p.fail(t.pos, "write param NAME, or param NAME in [LO, HI]",
			"expected the end of the param statement, found %s", t.describe())
	}
	hint := "put each statement on a line of its own, or separate statements with ';'"
	if prev := p.toks[p.i-1]; prev.kind == tokNumber || prev.kind == tokName || prev.kind == tokRParen {
		if t.kind == tokName || t.kind == tokNumber || t.kind == tokLParen {
			hint = "for a product write '*' between the factors"
		}
	}
	if t.kind == tokParam || t.kind == tokCost || t.kind == tokIn {
		hint = t.text + " is a keyword; it cannot be used as a name"
	}
	p.fail(t.pos, hint, "expected an operator or the end of the statement, found %s", t.describe())
}

// paramStmt parses: param NAME [in [LO, HI]].
func (p *parser) paramStmt() *ParamStmt {
	kw := p.next()
	t := p.cur()
	if t.kind != tokName {
		hint := "write param NAME, or param NAME in [LO, HI]"
		if t.kind == tokParam || t.kind == tokCost || t.kind == tokIn {
			hint = t.text + " is a keyword; it cannot be used as a name"
		}
		p.fail(t.pos, hint, "expected a parameter name after param, found %s", t.describe())
	}
	p.next()
	st := &ParamStmt{At: kw.pos, Name: t.text, NameAt: t.pos}
	if p.cur().kind != tokIn {
		return st
	}
	p.next()
	open := p.cur()
	if open.kind != tokLBrack {
		p.fail(open.pos, "a support is written param NAME in [LO, HI]",
			"expected '[' after in, found %s", open.describe())
	}
	p.next()
	p.nest++
	st.Lo = p.expr("for the lower bound")
	if t := p.cur(); t.kind != tokComma {
		p.fail(t.pos, "a support is written param NAME in [LO, HI]",
			"expected ',' between the lower and the upper bound, found %s", t.describe())
	}
	p.next()
	st.Hi = p.expr("for the upper bound")
	if t := p.cur(); t.kind != tokRBrack {
		hint := ""
		if t.kind == tokComma {
			hint = "a support has two bounds: [LO, HI]"
		}
		p.closeErr("']'", open, hint)
	}
	p.next()
	p.nest--
	return st
}

// closeErr reports a missing closing bracket (want names what was
// expected) for the opening token open.
func (p *parser) closeErr(want string, open token, hint string) {
	t := p.cur()
	p.fail(t.pos, hint, "expected %s to close '%s' at %d:%d, found %s",
		want, open.text, open.pos.Line, open.pos.Col, t.describe())
}

// startsStatement reports whether token i starts a statement that cannot
// continue an expression inside brackets: param, cost, NAME =, or the end
// of the input.
func (p *parser) startsStatement(i int) bool {
	switch p.toks[i].kind {
	case tokEOF, tokParam, tokCost:
		return true
	case tokName:
		return p.toks[i+1].kind == tokAssign
	}
	return false
}

// expr parses an expression; context says where, for messages ("after '='").
func (p *parser) expr(context string) Expr {
	if t := p.cur(); !startsExpr(t.kind) {
		p.expected(t, context)
	}
	return p.additive()
}

func startsExpr(k tokenKind) bool {
	switch k {
	case tokNumber, tokName, tokLParen, tokLBrack, tokMinus, tokPlus:
		return true
	}
	return false
}

// expected reports a missing expression.
func (p *parser) expected(t token, context string) {
	msg := "expected an expression"
	if context != "" {
		msg += " " + context
	}
	hint := ""
	switch t.kind {
	case tokParam, tokCost, tokIn:
		hint = t.text + " is a keyword; it cannot be used as a name"
	case tokStar:
		if p.i > 0 && p.toks[p.i-1].kind == tokStar {
			hint = "write x^2 for a power"
		}
	case tokCaret:
		hint = "'^' needs a base on its left, as in x^2"
	}
	p.fail(t.pos, hint, "%s, found %s", msg, t.describe())
}

// additive: multiplicative { ('+' | '-') multiplicative }
func (p *parser) additive() Expr {
	x := p.multiplicative()
	for {
		t := p.cur()
		if t.kind != tokPlus && t.kind != tokMinus {
			return x
		}
		p.next()
		y := p.operand(t)
		x = &Binary{At: t.pos, Op: t.text[0], X: x, Y: y}
	}
}

// multiplicative: unary { ('*' | '/') unary }
func (p *parser) multiplicative() Expr {
	x := p.unary()
	for {
		t := p.cur()
		if t.kind != tokStar && t.kind != tokSlash {
			return x
		}
		p.next()
		if n := p.cur(); t.kind == tokStar && n.kind == tokStar {
			p.fail(n.pos, "write x^2 for a power", "unexpected '*' after '*'")
		}
		if n := p.cur(); !startsExpr(n.kind) {
			p.expected(n, fmt.Sprintf("after '%s'", t.text))
		}
		x = &Binary{At: t.pos, Op: t.text[0], X: x, Y: p.unary()}
	}
}

// operand parses the right operand of '+' or '-'.
func (p *parser) operand(op token) Expr {
	if n := p.cur(); !startsExpr(n.kind) {
		p.expected(n, fmt.Sprintf("after '%s'", op.text))
	}
	return p.multiplicative()
}

// unary: ('-' | '+') unary | power. Every nesting of the grammar passes
// through here, so this is where the depth is counted.
func (p *parser) unary() Expr {
	t := p.cur()
	p.depth++
	if p.depth > p.lim.maxDepth {
		p.fail(t.pos, "split the expression into definitions (NAME = EXPR)",
			"expression is nested too deeply: more than %d levels", p.lim.maxDepth)
	}
	var x Expr
	if t.kind == tokMinus || t.kind == tokPlus {
		p.next()
		if n := p.cur(); !startsExpr(n.kind) {
			p.expected(n, fmt.Sprintf("after unary '%s'", t.text))
		}
		x = &Unary{At: t.pos, Op: t.text[0], X: p.unary()}
	} else {
		x = p.power()
	}
	p.depth--
	return x
}

// power: primary [ '^' unary ]. The exponent is a unary expression, so ^ is
// right-associative (2^3^2 = 2^(3^2)) and 2^-1 works; a unary minus before
// the base binds looser (-x^2 = -(x^2)).
func (p *parser) power() Expr {
	x := p.primary()
	t := p.cur()
	if t.kind != tokCaret {
		return x
	}
	p.next()
	if n := p.cur(); !startsExpr(n.kind) {
		p.expected(n, "after '^'")
	}
	return &Binary{At: t.pos, Op: '^', X: x, Y: p.unary()}
}

// primary: NUMBER | NAME | NAME '(' args ')' | '(' expr ')' | '[' elems ']'
func (p *parser) primary() Expr {
	t := p.cur()
	switch t.kind {
	case tokNumber:
		p.next()
		return &Number{At: t.pos, Value: t.value, Text: t.text}
	case tokName:
		p.next()
		if p.cur().kind == tokLParen {
			return p.call(t)
		}
		switch t.text {
		case "pi":
			return &Number{At: t.pos, Value: math.Pi, Text: "pi"}
		case "inf":
			return &Number{At: t.pos, Value: math.Inf(1), Text: "inf"}
		}
		return &Ident{At: t.pos, Name: t.text}
	case tokLParen:
		p.next()
		p.nest++
		x := p.expr("after '('")
		if c := p.cur(); c.kind != tokRParen {
			p.closeErr("')'", t, "")
		}
		p.next()
		p.nest--
		return x
	case tokLBrack:
		return p.vector()
	}
	p.expected(t, "")
	return nil
}

// call parses the arguments of a call; name is the function's name.
func (p *parser) call(name token) Expr {
	open := p.next()
	p.nest++
	c := &Call{At: name.pos, Name: name.text}
	if p.cur().kind != tokRParen {
		for {
			c.Args = append(c.Args, p.expr(fmt.Sprintf("for argument %d of %s", len(c.Args)+1, name.text)))
			t := p.cur()
			if t.kind == tokComma {
				p.next()
				continue
			}
			if t.kind != tokRParen {
				p.closeErr("',' or ')'", open, "")
			}
			break
		}
	}
	p.next()
	p.nest--
	return c
}

// vector parses a vector literal [e1, e2, ...].
func (p *parser) vector() Expr {
	open := p.next()
	p.nest++
	v := &Vector{At: open.pos}
	if t := p.cur(); t.kind == tokRBrack {
		p.fail(open.pos, "a vector needs at least one element, as in [1, 2, 3]", "empty vector")
	}
	for {
		if t := p.cur(); len(v.Elems) == p.lim.maxVector {
			p.fail(t.pos, "split the data into a smaller sample, or summarise it",
				"vector has more than %d elements", p.lim.maxVector)
		}
		v.Elems = append(v.Elems, p.expr("for a vector element"))
		t := p.cur()
		if t.kind == tokComma {
			p.next()
			if p.cur().kind == tokRBrack {
				break // a trailing comma, handy when a vector spans lines
			}
			continue
		}
		if t.kind != tokRBrack {
			hint := ""
			if t.kind == tokNumber || t.kind == tokName {
				hint = "separate the elements with ','"
			}
			p.closeErr("',' or ']'", open, hint)
		}
		break
	}
	p.next()
	p.nest--
	return v
}
