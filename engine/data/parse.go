package data

import (
	"fmt"
	"io"
	"strings"
	"unicode/utf8"

	"bellcheck/engine/model"
)

// Limits of a data table. A text beyond them is refused with an *Error
// rather than read in part.
const (
	// MaxBytes is the largest text read: 4 MiB.
	MaxBytes = 4 << 20
	// MaxColumns is the most columns a table may have.
	MaxColumns = 64
	// MaxColumnValues is the most values in one column, the longest vector a
	// model may hold (model.MaxVectorLen).
	MaxColumnValues = model.MaxVectorLen
	// MaxValues is the most values in all columns together (model.MaxDataValues).
	MaxValues = model.MaxDataValues
	// MaxCell is the longest cell, in bytes.
	MaxCell = 256
)

// Pos is a place in the text: a 1-based line, and a 1-based column counted
// in characters (a tab is one).
type Pos struct {
	Line, Col int
}

// Column is one named column of a table.
type Column struct {
	Name   string
	Values []float64
	// At is the place of the column's name in the header row.
	At Pos
}

// Table is a parsed data text.
type Table struct {
	Columns []Column
	// Separator is the separator found in the header row: "tab", "comma" or
	// "space".
	Separator string
}

// Vectors returns the columns as named vectors for model.ParseWith.
func (t *Table) Vectors() []model.Data {
	out := make([]model.Data, len(t.Columns))
	for i, c := range t.Columns {
		out[i] = model.Data{Name: c.Name, Values: c.Values}
	}
	return out
}

// Read reads a table from r (at most MaxBytes; more is an error) and parses it.
func Read(r io.Reader) (*Table, error) {
	b, err := io.ReadAll(io.LimitReader(r, MaxBytes+1))
	if err != nil {
		return nil, err
	}
	return Parse(string(b))
}

// Parse reads a table of numbers with a header row.
//
// The first line that is not blank and does not start with '#' is the
// header: it names the columns, and its separator is the table's: a tab if
// it has one, else a comma if it has one, else runs of spaces. Names follow
// the model language's rules (a letter or '_', then letters, digits or '_';
// not a keyword or a function's name). A cell may be quoted with double
// quotes ("" inside is one quote), which may hold the separator or a line
// break. Every other cell is a decimal number; blank lines are skipped. With
// tabs or commas a column may end before the others (its remaining cells
// empty, as when samples of different sizes stand side by side), but an
// empty cell above a value is an error, as is anything that is not a number
// (missing-value markers such as NA, formulas, percentages, decimal commas).
// A UTF-8 byte-order mark is skipped; other encodings are refused.
func Parse(src string) (*Table, error) {
	if err := checkText(src); err != nil {
		return nil, err
	}
	r := &reader{src: src, pos: Pos{Line: 1, Col: 1}}
	if strings.HasPrefix(src, bom8) {
		r.off = len(bom8)
	}
	return r.table()
}

// Byte-order marks.
const (
	bom8    = "\uFEFF"
	bom16le = "\xFF\xFE"
	bom16be = "\xFE\xFF"
)

// checkText refuses text that is too long, not UTF-8 or binary.
func checkText(src string) error {
	const save = "save the table as UTF-8 text (CSV or tab-separated)"
	switch {
	case len(src) > MaxBytes:
		at := positionOf(src, MaxBytes)
		return errorf(at, "use a smaller sample, or summarise the data (for instance by counts)",
			"data is too large: more than %d bytes (%d MiB), the limit", MaxBytes, MaxBytes>>20)
	case strings.HasPrefix(src, bom16le), strings.HasPrefix(src, bom16be):
		return errorf(Pos{1, 1}, save, "the text is UTF-16 (or UTF-32), not UTF-8")
	}
	if i := strings.IndexByte(src, 0); i >= 0 {
		return errorf(positionOf(src, i), save, "NUL byte: the text is binary, or UTF-16 without a byte-order mark")
	}
	if !utf8.ValidString(src) {
		i := 0
		for i < len(src) {
			r, size := utf8.DecodeRuneInString(src[i:])
			if r == utf8.RuneError && size == 1 {
				break
			}
			i += size
		}
		return errorf(positionOf(src, i), save, "invalid UTF-8 byte 0x%02x (the text is in another encoding)", src[i])
	}
	return nil
}

// positionOf returns the place of byte offset off in src, with the line
// breaks the reader counts (\n, \r\n, a lone \r) and a leading byte-order
// mark not counted.
func positionOf(src string, off int) Pos {
	pos := Pos{1, 1}
	i := 0
	if strings.HasPrefix(src, bom8) {
		i = len(bom8)
	}
	for i < off && i < len(src) {
		r, size := utf8.DecodeRuneInString(src[i:])
		i += size
		switch {
		case r == '\r' && i < len(src) && src[i] == '\n':
			// The \n that follows ends the line.
		case r == '\n', r == '\r':
			pos.Line++
			pos.Col = 1
		default:
			pos.Col++
		}
	}
	return pos
}

// table reads the header and the rows.
func (r *reader) table() (*Table, error) {
	var header []cell
	r.limit = MaxColumns
	for r.off < len(r.src) {
		if r.lineStartsComment() {
			r.skipLine()
			continue
		}
		r.detectSeparator()
		cells, err := r.row()
		if err != nil {
			return nil, err
		}
		if !allEmpty(cells) {
			header = append([]cell(nil), cells...)
			break
		}
	}
	if header == nil {
		return nil, errorf(r.pos, "paste a header row naming the columns, then the rows of numbers", "no data: the text is empty")
	}
	cols, err := r.columns(header)
	if err != nil {
		return nil, err
	}
	r.limit, r.header = len(cols), true
	total := 0
	for r.off < len(r.src) {
		cells, err := r.row()
		if err != nil {
			return nil, err
		}
		if allEmpty(cells) {
			continue
		}
		if err := r.values(cols, cells, &total); err != nil {
			return nil, err
		}
	}
	t := &Table{Separator: map[byte]string{'\t': "tab", ',': "comma", ' ': "space"}[r.sep]}
	for _, c := range cols {
		if c.name == "" {
			continue
		}
		if len(c.values) == 0 {
			return nil, errorf(c.at, "put the values in the rows below the header", "column %s has no values", c.name)
		}
		t.Columns = append(t.Columns, Column{Name: c.name, Values: c.values, At: c.at})
	}
	return t, nil
}

// columns checks the header's names.
func (r *reader) columns(header []cell) ([]*column, error) {
	numbers := 0
	for _, c := range header {
		if _, problem, _ := number(c.text); problem == "" {
			numbers++
		}
	}
	if numbers == len(header) {
		return nil, errorf(header[0].at, "add a first row naming the columns, such as x"+sepText(r.sep)+"y",
			"the first row holds numbers, not the columns' names")
	}
	named := false
	for _, c := range header {
		named = named || !c.empty()
	}
	if !named {
		return nil, errorf(header[0].at, "name the columns in the first row", "the header row names no columns")
	}
	seen := map[string]Pos{}
	cols := make([]*column, len(header))
	for i, c := range header {
		if i == MaxColumns {
			return nil, errorf(c.at, "", "too many columns: more than %d", MaxColumns)
		}
		cols[i] = &column{name: c.text, at: c.at}
		if c.empty() {
			continue // a column with no name is allowed only when it is empty
		}
		if problem := model.NameProblem(c.text); problem != "" {
			return nil, errorf(c.at, nameHint(c.text, r.sep), "column name %s %s", show(c.text), problem)
		}
		if at, dup := seen[c.text]; dup {
			return nil, errorf(c.at, "give each column a name of its own", "column %s is named twice (also at %d:%d)", c.text, at.Line, at.Col)
		}
		seen[c.text] = c.at
	}
	return cols, nil
}

// sepText shows a separator in a hint.
func sepText(sep byte) string {
	switch sep {
	case '\t':
		return "<tab>"
	case ',':
		return ","
	}
	return " "
}

// nameHint suggests how to fix a column's name.
func nameHint(name string, sep byte) string {
	if sep == ' ' && strings.ContainsRune(name, ';') {
		return "separate the columns with tabs, commas or spaces (semicolons are not read)"
	}
	var b strings.Builder
	for _, r := range name {
		switch {
		case r == '_' || ('a' <= r && r <= 'z') || ('A' <= r && r <= 'Z') || ('0' <= r && r <= '9'):
			b.WriteRune(r)
		case b.Len() > 0 && !strings.HasSuffix(b.String(), "_"):
			b.WriteByte('_')
		}
	}
	s := strings.Trim(b.String(), "_")
	for _, try := range []string{s, s + "_"} {
		if s != "" && model.NameProblem(try) == "" {
			return "rename the column, for instance to " + try
		}
	}
	return "a column's name starts with a letter or '_' and has only letters, digits and '_' (it names a vector in the model)"
}

// values adds one data row's cells to the columns.
func (r *reader) values(cols []*column, cells []cell, total *int) error {
	for i, c := range cells {
		if i < len(cols) {
			continue
		}
		if !c.empty() {
			return errorf(c.at, "every row has at most one cell for each column named in the header",
				"row has %d cells, but the header names %d columns", len(cells), len(cols))
		}
	}
	if r.sep == ' ' && len(cells) < len(cols) {
		return errorf(r.end, "with spaces between values every row needs a value for each column; separate the columns with tabs or commas for columns of different lengths",
			"row has %s, but the header names %d columns (%s is missing)", plural(len(cells), "value"), len(cols), cols[len(cells)].label(len(cells)))
	}
	for j, col := range cols {
		var c cell
		if j < len(cells) {
			c = cells[j]
		} else {
			// A row that ends early: its missing cells are empty, at its end.
			c = cell{at: r.end}
		}
		if c.empty() {
			if !col.hasGap {
				col.gap, col.hasGap = c.at, true
			}
			continue
		}
		if col.name == "" {
			return errorf(c.at, "name every column in the header row", "value in column %d, which has no name in the header", j+1)
		}
		if col.hasGap {
			return errorf(col.gap, "every cell of a column down to its last value needs a number: fill it in, or remove the row",
				"empty cell in column %s, above its value at %d:%d", col.name, c.at.Line, c.at.Col)
		}
		v, problem, hint := number(c.text)
		if problem != "" {
			if h := mixedSeparators(c, r.sep); h != "" {
				hint = h
			}
			return errorf(c.at, hint, "%s in column %s", problem, col.name)
		}
		if len(col.values) == MaxColumnValues {
			return errorf(c.at, "use a smaller sample, or summarise the data (for instance by counts)",
				"column %s has more than %d values", col.name, MaxColumnValues)
		}
		if *total == MaxValues {
			return errorf(c.at, "use a smaller sample, or fewer columns",
				"the table has more than %d values", MaxValues)
		}
		col.values = append(col.values, v)
		*total++
	}
	return nil
}

// label names a column in a message: its name, or its number when it has none.
func (c *column) label(i int) string {
	if c.name == "" {
		return fmt.Sprintf("column %d", i+1)
	}
	return c.name
}

// plural writes "1 value", "2 values".
func plural(n int, what string) string {
	if n == 1 {
		return "1 " + what
	}
	return fmt.Sprintf("%d %ss", n, what)
}

// mixedSeparators returns a hint when an unquoted cell is several numbers
// separated by a space, a tab or a semicolon other than the table's
// separator (rows copied from another source), or "".
func mixedSeparators(c cell, sep byte) string {
	if c.quoted {
		return ""
	}
	for _, other := range []string{" ", "\t", ";"} {
		if other[0] == sep || !strings.Contains(c.text, other) {
			continue
		}
		parts := strings.FieldsFunc(c.text, func(r rune) bool { return r == rune(other[0]) || r == ' ' })
		if len(parts) < 2 {
			continue
		}
		all := true
		for _, p := range parts {
			all = all && decimal(p)
		}
		if all {
			return fmt.Sprintf("the header separates its columns with %s, but this row holds several numbers separated by %s: use one separator throughout",
				sepName(sep), sepName(other[0]))
		}
	}
	return ""
}

// sepName names a separator in a hint.
func sepName(b byte) string {
	switch b {
	case '\t':
		return "tabs"
	case ',':
		return "commas"
	case ';':
		return "semicolons"
	}
	return "spaces"
}
