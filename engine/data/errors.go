package data

import (
	"fmt"
	"strconv"
	"strings"
	"unicode"
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

// Detail renders the error for a person, on several lines without a final
// line break: the text Error gives, the offending line of src (at most
// maxLine characters of it around the place, invisible characters shown as
// U+FFFD), a caret under the column, and the hint. src must be the text the
// error was found in.
func (e *Error) Detail(src string) string {
	var b strings.Builder
	b.WriteString(e.Error())
	if line, ok := lineOf(src, e.Line); ok {
		rs := []rune(line)
		from := 0
		if e.Col > maxLine/2 {
			from = min(e.Col-1-maxLine/2, max(len(rs)-maxLine, 0))
		}
		to := min(len(rs), from+maxLine)
		var shown, pad strings.Builder
		for i, r := range rs[from:to] {
			switch {
			case r == '\t':
			case r == utf8.RuneError, !unicode.IsPrint(r) && r != ' ':
				r = utf8.RuneError
			}
			shown.WriteRune(r)
			if from+i < e.Col-1 {
				if r == '\t' {
					pad.WriteByte('\t')
				} else {
					pad.WriteByte(' ')
				}
			}
		}
		for i := to; i < e.Col-1; i++ {
			pad.WriteByte(' ')
		}
		b.WriteString("\n    " + shown.String() + "\n    " + pad.String() + "^")
	}
	if e.Hint != "" {
		b.WriteString("\nhint: " + e.Hint)
	}
	return b.String()
}

// maxLine is the most characters of a line Detail shows.
const maxLine = 100

// lineOf returns line n (1-based) of src, with the line breaks Parse counts
// and a leading byte-order mark left out.
func lineOf(src string, n int) (string, bool) {
	src = strings.TrimPrefix(src, bom8)
	for line := 1; ; line++ {
		i := strings.IndexAny(src, "\r\n")
		if line == n {
			if i < 0 {
				return src, true
			}
			return src[:i], true
		}
		if i < 0 {
			return "", false
		}
		if src[i] == '\r' && i+1 < len(src) && src[i+1] == '\n' {
			i++
		}
		src = src[i+1:]
	}
}
