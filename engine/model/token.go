package model

import "fmt"

// tokenKind is the lexical class of a token.
type tokenKind int

const (
	tokEOF     tokenKind = iota
	tokNewline           // end of a line: a statement separator outside ( ) and [ ]
	tokSemi              // ';'
	tokNumber
	tokName
	tokParam // keyword param
	tokIn    // keyword in
	tokCost  // keyword cost
	tokPlus
	tokMinus
	tokStar
	tokSlash
	tokCaret
	tokLParen
	tokRParen
	tokLBrack
	tokRBrack
	tokComma
	tokAssign
	tokColon
)

// keywords maps the reserved words of the language to their token kinds.
var keywords = map[string]tokenKind{
	"param": tokParam,
	"in":    tokIn,
	"cost":  tokCost,
}

var punct = map[tokenKind]string{
	tokSemi:   ";",
	tokPlus:   "+",
	tokMinus:  "-",
	tokStar:   "*",
	tokSlash:  "/",
	tokCaret:  "^",
	tokLParen: "(",
	tokRParen: ")",
	tokLBrack: "[",
	tokRBrack: "]",
	tokComma:  ",",
	tokAssign: "=",
	tokColon:  ":",
}

// token is one lexical element of the model text.
type token struct {
	kind  tokenKind
	pos   Pos
	text  string  // the text as written (names, numbers, keywords)
	value float64 // the value of a number
}

// describe names the token for messages: "end of line", "name x",
// "number 2.5", "keyword in", "'('".
func (t token) describe() string {
	switch t.kind {
	case tokEOF:
		return "end of input"
	case tokNewline:
		return "end of line"
	case tokNumber:
		return "number " + t.text
	case tokName:
		return "name " + t.text
	case tokParam, tokIn, tokCost:
		return "keyword " + t.text
	}
	if s, ok := punct[t.kind]; ok {
		return "'" + s + "'"
	}
	return fmt.Sprintf("token %d", int(t.kind))
}
