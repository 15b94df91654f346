package data

import (
	"fmt"
	"strconv"
	"unicode/utf8"
)

// Error is a problem found in a data table: where it is (1-based line and
// column, the column counted in characters), what is wrong and, when it
// helps, a hint on how to fix it.
type Error struct {
	Line, Col int
	Msg       string // lower-case; names the table's column where there is one
	Hint      string // may be empty
}

// Error returns "line:col: msg".
func (e *Error) Error() string {
	return fmt.Sprintf("%d:%d: %s", e.Line, e.Col, e.Msg)
}

// errorf returns an *Error at pos.
func errorf(pos Pos, hint, format string, args ...any) *Error {
	return &Error{Line: pos.Line, Col: pos.Col, Msg: fmt.Sprintf(format, args...), Hint: hint}
}

// maxShown is how many characters of a cell a message shows.
const maxShown = 40

// show quotes a cell's text for a message: at most maxShown characters, with
// control, bidirectional and other invisible characters escaped, so that
// what the message says is what is there.
func show(s string) string {
	if utf8.RuneCountInString(s) > maxShown {
		n := 0
		for i := range s {
			if n == maxShown {
				s = s[:i]
				break
			}
			n++
		}
		return strconv.Quote(s) + "..."
	}
	return strconv.Quote(s)
}
