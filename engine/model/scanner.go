package model

import (
	"fmt"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"
)

// tokIllegal marks a place where the scanner already reported an error; the
// parser skips the rest of the statement without reporting another.
const tokIllegal tokenKind = -1

// bom is the byte-order mark some editors put at the start of a file.
const bom = "\uFEFF"

// scanner splits model text into tokens. It reports invalid UTF-8, NUL
// bytes, stray characters and malformed numbers with their positions.
type scanner struct {
	src  string
	pos  Pos // position of the next rune
	errs *errorSink
}

// scanAll returns the tokens of src, ending with a tokEOF token.
func scanAll(src string, errs *errorSink) []token {
	s := &scanner{src: src, pos: Pos{Line: 1, Col: 1}, errs: errs}
	// A byte-order mark at the very start is an editor's artefact: skip it.
	if strings.HasPrefix(src, bom) {
		s.pos.Offset = len(bom)
	}
	// Typical text has a token for every three or four bytes.
	toks := make([]token, 0, len(src)/3+8)
	for {
		t := s.next()
		toks = append(toks, t)
		if t.kind == tokEOF {
			return toks
		}
	}
}

// peek returns the rune at the current position and its size in bytes
// (0 at the end of the text).
func (s *scanner) peek() (rune, int) {
	if s.pos.Offset >= len(s.src) {
		return 0, 0
	}
	c := s.src[s.pos.Offset]
	if c < utf8.RuneSelf {
		return rune(c), 1
	}
	return utf8.DecodeRuneInString(s.src[s.pos.Offset:])
}

// peekByte returns the byte n bytes after the current position, or 0.
func (s *scanner) peekByte(n int) byte {
	if s.pos.Offset+n < len(s.src) {
		return s.src[s.pos.Offset+n]
	}
	return 0
}

// advance moves past one rune of the given size.
func (s *scanner) advance(r rune, size int) {
	s.pos.Offset += size
	if r == '\n' {
		s.pos.Line++
		s.pos.Col = 1
	} else {
		s.pos.Col++
	}
}

// badRune reports an invalid UTF-8 byte or a NUL byte at the current
// position and reports whether it did.
func (s *scanner) badRune(r rune, size int) bool {
	switch {
	case r == utf8.RuneError && size == 1:
		s.errs.add(s.pos, "the model text must be UTF-8", "invalid UTF-8 byte 0x%02x", s.src[s.pos.Offset])
		return true
	case r == 0:
		s.errs.add(s.pos, "", "unexpected NUL byte in the model text")
		return true
	}
	return false
}

func isNameStart(r rune) bool { return r == '_' || unicode.IsLetter(r) }
func isNamePart(r rune) bool  { return r == '_' || unicode.IsLetter(r) || unicode.IsDigit(r) }
func isDigit(c byte) bool     { return '0' <= c && c <= '9' }

// next scans one token.
func (s *scanner) next() token {
	for {
		r, size := s.peek()
		start := s.pos
		switch {
		case size == 0:
			return token{kind: tokEOF, pos: start}
		case r == ' ' || r == '\t' || r == '\r':
			s.advance(r, size)
			continue
		case r == '\n':
			s.advance(r, size)
			return token{kind: tokNewline, pos: start, text: "\n"}
		case r == '#':
			s.skipComment()
			continue
		case r < utf8.RuneSelf && isDigit(byte(r)), r == '.' && isDigit(s.peekByte(1)):
			return s.number()
		case isNameStart(r):
			for {
				s.advance(r, size)
				r, size = s.peek()
				if size == 0 || !isNamePart(r) {
					break
				}
			}
			text := s.src[start.Offset:s.pos.Offset]
			if k, ok := keywords[text]; ok {
				return token{kind: k, pos: start, text: text}
			}
			return token{kind: tokName, pos: start, text: text}
		}
		if k, ok := punctKind(r); ok {
			s.advance(r, size)
			return token{kind: k, pos: start, text: string(r)}
		}
		if !s.badRune(r, size) {
			s.errs.add(start, strayHint[r], "unexpected character %s", quoteRune(r))
		}
		s.advance(r, size)
		return token{kind: tokIllegal, pos: start}
	}
}

// skipComment skips from '#' to the end of the line (not including the
// newline), still reporting invalid UTF-8 and NUL bytes inside.
func (s *scanner) skipComment() {
	for {
		r, size := s.peek()
		if size == 0 || r == '\n' {
			return
		}
		s.badRune(r, size)
		s.advance(r, size)
	}
}

// number scans a numeric literal: digits with an optional fraction and
// exponent (1, 2.5, .5, 1., 1e-3, 2E+3). A literal that runs on into letters,
// digits or dots (2x, 1.2.3, 1e) is reported as a bad number.
func (s *scanner) number() token {
	start := s.pos
	digits := func() {
		for isDigit(s.peekByte(0)) {
			s.advance(rune(s.peekByte(0)), 1)
		}
	}
	digits()
	if s.peekByte(0) == '.' {
		s.advance('.', 1)
		digits()
	}
	if c := s.peekByte(0); c == 'e' || c == 'E' {
		n := 1
		if d := s.peekByte(1); d == '+' || d == '-' {
			n = 2
		}
		if isDigit(s.peekByte(n)) {
			for i := 0; i < n; i++ {
				s.advance(rune(s.peekByte(0)), 1)
			}
			digits()
		}
	}
	good := s.src[start.Offset:s.pos.Offset]
	// Anything glued on makes the whole run a bad number.
	if r, size := s.peek(); size > 0 && (isNamePart(r) || r == '.') {
		for size > 0 && (isNamePart(r) || r == '.') {
			s.advance(r, size)
			r, size = s.peek()
		}
		text := s.src[start.Offset:s.pos.Offset]
		rest := text[len(good):]
		hint := ""
		switch {
		case rest[0] == 'e' || rest[0] == 'E':
			if len(rest) == 1 {
				hint = "an exponent needs digits, as in 1e-3"
			} else {
				hint = fmt.Sprintf("for a product write %s*%s", good, rest)
			}
		case rest[0] == '.':
			hint = "a number has at most one decimal point"
		case isNameStart(rune(rest[0])) || rest[0] >= utf8.RuneSelf:
			hint = fmt.Sprintf("for a product write %s*%s", good, rest)
		}
		s.errs.add(start, hint, "bad number %s", text)
		return token{kind: tokIllegal, pos: start}
	}
	v, err := strconv.ParseFloat(good, 64)
	if err != nil {
		// The text is well-formed, so the only failure is overflow.
		s.errs.add(start, fmt.Sprintf("the largest number is about %.4g; write inf for infinity", 1.7976931348623157e308),
			"number %s is too large", good)
		return token{kind: tokIllegal, pos: start}
	}
	return token{kind: tokNumber, pos: start, text: good, value: v}
}

func punctKind(r rune) (tokenKind, bool) {
	switch r {
	case ';':
		return tokSemi, true
	case '+':
		return tokPlus, true
	case '-':
		return tokMinus, true
	case '*':
		return tokStar, true
	case '/':
		return tokSlash, true
	case '^':
		return tokCaret, true
	case '(':
		return tokLParen, true
	case ')':
		return tokRParen, true
	case '[':
		return tokLBrack, true
	case ']':
		return tokRBrack, true
	case ',':
		return tokComma, true
	case '=':
		return tokAssign, true
	case ':':
		return tokColon, true
	}
	return 0, false
}

// quoteRune shows a rune for a message: 'x' when printable, U+XXXX otherwise.
func quoteRune(r rune) string {
	if unicode.IsPrint(r) && r != '\'' {
		return "'" + string(r) + "'"
	}
	return fmt.Sprintf("U+%04X", r)
}

// strayHint suggests what a stray character was probably meant to be.
var strayHint = map[rune]string{
	'\u2212': "use the ASCII '-' for minus",
	'\u00d7': "use '*' for multiplication",
	'\u00b7': "use '*' for multiplication",
	'\u22c5': "use '*' for multiplication",
	'\u00f7': "use '/' for division",
	'{':      "use ( ) for grouping and [ ] for vectors",
	'}':      "use ( ) for grouping and [ ] for vectors",
	'%':      "there is no remainder operator",
	'!':      "there is no factorial or negation operator; lgamma(n+1) is log(n!)",
	'"':      "the model language has no strings",
	'\'':     "the model language has no strings; for a derivative x' write an ode block, with the line x = START rate DERIVATIVE",
	'<':      "there are no comparisons; give a support with param NAME in [LO, HI]",
	'>':      "there are no comparisons; give a support with param NAME in [LO, HI]",
	'\u00b2': "write x^2 for a power",
	'\u00b3': "write x^3 for a power",
}
