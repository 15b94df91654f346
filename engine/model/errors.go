package model

import (
	"errors"
	"fmt"
	"sort"
	"strings"
	"unicode/utf8"
)

// maxErrors is the number of errors after which Parse stops looking for more.
const maxErrors = 10

// Error is a problem found in a model's text: where it is, what is wrong and,
// when there is something useful to add, a hint on how to fix it.
type Error struct {
	Pos  Pos
	Msg  string // lower-case; says what was expected or what is wrong
	Hint string // may be empty
}

// Error returns "line:col: msg".
func (e *Error) Error() string {
	return fmt.Sprintf("%d:%d: %s", e.Pos.Line, e.Pos.Col, e.Msg)
}

// Detail renders the error for a person, on several lines without a final
// line break: the message as Error gives it, the offending line of src, a
// caret under the column, and the hint on a line of its own. src must be the
// text the error was found in.
func (e *Error) Detail(src string) string {
	var b strings.Builder
	b.WriteString(e.Error())
	if line, ok := sourceLine(src, e.Pos.Line); ok {
		const indent = "    "
		shown, pad := caretLine(line, e.Pos.Col)
		b.WriteString("\n" + indent + shown)
		b.WriteString("\n" + indent + pad + "^")
	}
	if e.Hint != "" {
		b.WriteString("\nhint: " + e.Hint)
	}
	return b.String()
}

// sourceLine returns line n (1-based) of src without its line ending.
func sourceLine(src string, n int) (string, bool) {
	if n < 1 {
		return "", false
	}
	for i := 1; i < n; i++ {
		j := strings.IndexByte(src, '\n')
		if j < 0 {
			return "", false
		}
		src = src[j+1:]
	}
	if j := strings.IndexByte(src, '\n'); j >= 0 {
		src = src[:j]
	}
	return strings.TrimSuffix(src, "\r"), true
}

// caretLine returns the line as it is shown (invalid UTF-8 and control
// characters other than tab replaced by U+FFFD, so a terminal shows one
// column for each) and the white space that puts a caret under column col:
// a tab for each tab before the column, a space for every other rune.
func caretLine(line string, col int) (shown, pad string) {
	var s, p strings.Builder
	c := 1
	for len(line) > 0 {
		r, size := utf8.DecodeRuneInString(line)
		line = line[size:]
		switch {
		case r == '\t':
			s.WriteRune(r)
		case r == utf8.RuneError && size == 1, r < ' ', r == 0x7f:
			s.WriteRune(utf8.RuneError)
		default:
			s.WriteRune(r)
		}
		if c < col {
			if r == '\t' {
				p.WriteByte('\t')
			} else {
				p.WriteByte(' ')
			}
		}
		c++
	}
	for ; c < col; c++ {
		p.WriteByte(' ')
	}
	return s.String(), p.String()
}

// ErrorList is the list of errors found in a model, sorted by position.
type ErrorList []*Error

// Error returns the first error and how many more there are.
func (l ErrorList) Error() string {
	switch len(l) {
	case 0:
		return "no errors"
	case 1:
		return l[0].Error()
	case 2:
		return l[0].Error() + " (and 1 more error)"
	}
	return fmt.Sprintf("%s (and %d more errors)", l[0].Error(), len(l)-1)
}

// Detail renders every error with Error.Detail, separated by blank lines.
func (l ErrorList) Detail(src string) string {
	parts := make([]string, len(l))
	for i, e := range l {
		parts[i] = e.Detail(src)
	}
	return strings.Join(parts, "\n\n")
}

// Len, Less and Swap sort the list by position.
func (l ErrorList) Len() int      { return len(l) }
func (l ErrorList) Swap(i, j int) { l[i], l[j] = l[j], l[i] }
func (l ErrorList) Less(i, j int) bool {
	if l[i].Pos.Offset != l[j].Pos.Offset {
		return l[i].Pos.Offset < l[j].Pos.Offset
	}
	return l[i].Msg < l[j].Msg
}

// Sort sorts the list by position.
func (l ErrorList) Sort() { sort.Stable(l) }

// Detail renders err for a person: with the offending lines (see
// Error.Detail) when it is an ErrorList or an *Error from Parse, as
// err.Error() otherwise, and "" for nil.
func Detail(err error, src string) string {
	var list ErrorList
	var one *Error
	switch {
	case err == nil:
		return ""
	case errors.As(err, &list):
		return list.Detail(src)
	case errors.As(err, &one):
		return one.Detail(src)
	}
	return err.Error()
}

// errorSink collects errors up to maxErrors.
type errorSink struct {
	list ErrorList
}

// full reports whether no more errors are wanted.
func (s *errorSink) full() bool { return len(s.list) >= maxErrors }

func (s *errorSink) add(pos Pos, hint, format string, args ...any) {
	if s.full() {
		return
	}
	msg := fmt.Sprintf(format, args...)
	for _, e := range s.list {
		if e.Pos == pos && e.Msg == msg {
			return // the same error, found again through another use of a function
		}
	}
	s.list = append(s.list, &Error{Pos: pos, Msg: msg, Hint: hint})
}

// err returns the sorted list, or nil when it is empty.
func (s *errorSink) err() error {
	if len(s.list) == 0 {
		return nil
	}
	s.list.Sort()
	return s.list
}
