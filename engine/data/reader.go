package data

import (
	"strings"
	"unicode/utf8"
)

// cell is one cell of a row as written: its text (unquoted), where it
// starts, and whether it was quoted.
type cell struct {
	text   string
	at     Pos
	quoted bool
}

func (c cell) empty() bool { return c.text == "" }

// reader splits the text into rows of cells.
type reader struct {
	src string
	off int // byte offset of the next rune
	pos Pos // place of the next rune
	sep byte
	// end is where the last row read ends (before its line break).
	end Pos
	// cells is the last row's cells; the next row reuses it.
	cells []cell
	// limit is the most cells a row keeps: MaxColumns for the header, then
	// the header's columns. Empty cells beyond it (trailing separators) are
	// skipped, and a value beyond it is an error, so that a line of a
	// million separators costs no memory.
	limit  int
	header bool // the header has been read
}

// peek returns the next byte, or 0 at the end of the text.
func (r *reader) peek() byte {
	if r.off < len(r.src) {
		return r.src[r.off]
	}
	return 0
}

// advance moves past the next rune, which is not a line break.
func (r *reader) advance() {
	_, size := utf8.DecodeRuneInString(r.src[r.off:])
	r.off += size
	r.pos.Col++
}

// atLineEnd reports whether the reader is at a line break or the end.
func (r *reader) atLineEnd() bool {
	c := r.peek()
	return r.off >= len(r.src) || c == '\n' || c == '\r'
}

// newline moves past a line break (\n, \r\n or \r) when there is one.
func (r *reader) newline() {
	switch r.peek() {
	case '\r':
		r.off++
		if r.peek() == '\n' {
			r.off++
		}
	case '\n':
		r.off++
	default:
		return
	}
	r.pos.Line++
	r.pos.Col = 1
}

// blank reports whether c is white space around cells: a space, or a tab
// unless tabs separate the cells.
func (r *reader) blank(c byte) bool {
	return c == ' ' || (c == '\t' && r.sep != '\t')
}

// skipLine moves to the start of the next line.
func (r *reader) skipLine() {
	for !r.atLineEnd() {
		r.advance()
	}
	r.newline()
}

// lineStartsComment reports whether the line from the reader's place is a
// comment: its first non-blank character is '#'.
func (r *reader) lineStartsComment() bool {
	i := r.off
	for i < len(r.src) && (r.src[i] == ' ' || r.src[i] == '\t') {
		i++
	}
	return i < len(r.src) && r.src[i] == '#'
}

// detectSeparator chooses the separator from the header line at the
// reader's place: a tab, else a comma (outside quotes), else spaces.
func (r *reader) detectSeparator() {
	comma, quoted := false, false
	for i := r.off; i < len(r.src); i++ {
		c := r.src[i]
		if c == '"' {
			quoted = !quoted
			continue
		}
		if quoted {
			continue
		}
		if c == '\n' || c == '\r' {
			break
		}
		if c == '\t' {
			r.sep = '\t'
			return
		}
		if c == ',' {
			comma = true
		}
	}
	if comma {
		r.sep = ','
	} else {
		r.sep = ' '
	}
}

// row reads the cells of one row (which ends at a line break outside
// quotes or at the end of the text) and moves past its line break.
func (r *reader) row() ([]cell, error) {
	cells := r.cells[:0]
	defer func() { r.cells = cells[:0] }()
	n := 0 // cells read, kept or not
	for {
		for r.blank(r.peek()) {
			r.advance()
		}
		start := r.pos
		if r.atLineEnd() {
			r.end = r.pos
			if r.sep != ' ' && len(cells) < r.limit {
				cells = append(cells, cell{at: start})
			}
			r.newline()
			return cells, nil
		}
		var c cell
		var err error
		if r.peek() == '"' {
			c, err = r.quotedCell()
		} else {
			c = r.plainCell()
		}
		if err != nil {
			return nil, err
		}
		if len(c.text) > MaxCell {
			return nil, errorf(start, "a cell holds one number", "cell is too long: %d bytes, at most %d", len(c.text), MaxCell)
		}
		n++
		switch {
		case len(cells) < r.limit:
			cells = append(cells, c)
		case !c.empty():
			return nil, r.beyond(c, n)
		}
		gap := false
		for r.blank(r.peek()) {
			r.advance()
			gap = true
		}
		switch {
		case r.atLineEnd():
			r.end = r.pos
			r.newline()
			return cells, nil
		case r.peek() == r.sep:
			r.advance()
		case r.sep == ' ' && gap:
			// Runs of blanks separate the cells.
		default:
			return nil, errorf(r.pos, "a quoted cell ends at its closing quote; a quote inside it is written twice (\"\")",
				"unexpected %s after the closing quote of the cell at %d:%d", show(string(r.rest())), start.Line, start.Col)
		}
	}
}

// beyond reports the n-th cell c of a row, which holds a value but lies
// beyond the row's limit.
func (r *reader) beyond(c cell, n int) error {
	if !r.header {
		return errorf(c.at, "", "too many columns: more than %d", MaxColumns)
	}
	return errorf(c.at, "every row has at most one cell for each column named in the header",
		"value in cell %d of the row, but the header names %s", n, plural(r.limit, "column"))
}

// rest returns the next rune as a string.
func (r *reader) rest() string {
	_, size := utf8.DecodeRuneInString(r.src[r.off:])
	return r.src[r.off : r.off+size]
}

// plainCell reads an unquoted cell up to the separator or the line's end,
// without the blanks around it.
func (r *reader) plainCell() cell {
	c := cell{at: r.pos}
	start := r.off
	end := r.off
	for !r.atLineEnd() {
		b := r.peek()
		if b == r.sep || (r.sep == ' ' && r.blank(b)) {
			break
		}
		r.advance()
		if !r.blank(b) {
			end = r.off
		}
	}
	c.text = r.src[start:end]
	return c
}

// quotedCell reads a cell in double quotes, with "" standing for one quote;
// it may span lines.
func (r *reader) quotedCell() (cell, error) {
	c := cell{at: r.pos, quoted: true}
	r.advance() // the opening quote
	var b strings.Builder
	for {
		if r.off >= len(r.src) {
			return c, errorf(c.at, "close the quote, or remove it", "the quote opened at %d:%d is never closed", c.at.Line, c.at.Col)
		}
		ch := r.peek()
		switch {
		case ch == '"' && r.off+1 < len(r.src) && r.src[r.off+1] == '"':
			b.WriteByte('"')
			r.advance()
			r.advance()
		case ch == '"':
			r.advance()
			c.text = strings.TrimSpace(b.String())
			return c, nil
		case ch == '\n' || ch == '\r':
			b.WriteByte('\n')
			r.newline()
		default:
			s := r.rest()
			b.WriteString(s)
			r.advance()
		}
		if b.Len() > MaxCell {
			return c, errorf(c.at, "a cell holds one number; check for a quote that is never closed",
				"cell is too long: more than %d bytes", MaxCell)
		}
	}
}

// column is a column being read.
type column struct {
	name   string
	at     Pos
	values []float64
	// gap is the first empty cell, once the column has one.
	gap    Pos
	hasGap bool
}

// allEmpty reports whether every cell of a row is empty (a blank line).
func allEmpty(cells []cell) bool {
	for _, c := range cells {
		if !c.empty() || c.quoted {
			return false
		}
	}
	return true
}
