package data

import (
	"errors"
	"math"
	"reflect"
	"runtime"
	"strconv"
	"strings"
	"testing"
)

// col is a column as a test expects it.
type col struct {
	name   string
	values []float64
}

func checkTable(t *testing.T, src string, tb *Table, err error, sep string, want []col) {
	t.Helper()
	if err != nil {
		t.Fatalf("%q: %v", src, err)
	}
	if tb.Separator != sep {
		t.Errorf("%q: separator %q, want %q", src, tb.Separator, sep)
	}
	var got []col
	for _, c := range tb.Columns {
		got = append(got, col{c.Name, c.Values})
	}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("%q:\n got %v\nwant %v", src, got, want)
	}
}

// TestParseTables reads tables in each layout. The quoting rules are those
// of RFC 4180 (section 2: fields in double quotes may hold the separator and
// line breaks; a quote inside is written twice); the expected numbers are
// the decimal literals as written.
func TestParseTables(t *testing.T) {
	for _, tc := range []struct {
		src  string
		sep  string
		want []col
	}{
		{"x\ty\n1\t2\n3\t4\n", "tab", []col{{"x", []float64{1, 3}}, {"y", []float64{2, 4}}}},
		{"x,y\n1,2\n3,4", "comma", []col{{"x", []float64{1, 3}}, {"y", []float64{2, 4}}}},
		{"x y\n1 2\n3   4\n", "space", []col{{"x", []float64{1, 3}}, {"y", []float64{2, 4}}}},
		// Spaces around cells and runs of spaces and tabs in the space layout.
		{"  x \t  y\n 1\t 2 \n", "tab", []col{{"x", []float64{1}}, {"y", []float64{2}}}},
		{" x ,  y \n 1 , 2 \n", "comma", []col{{"x", []float64{1}}, {"y", []float64{2}}}},
		{"x  y\n\t1 \t 2\n", "space", []col{{"x", []float64{1}}, {"y", []float64{2}}}},
		// A single column.
		{"dose\n0.5\n1\n", "space", []col{{"dose", []float64{0.5, 1}}}},
		// RFC 4180 quoting: quoted names and values, the separator and a
		// line break inside quotes, a doubled quote.
		{"\"x\",\"y\"\n\"1.5\",\"2\"\n", "comma", []col{{"x", []float64{1.5}}, {"y", []float64{2}}}},
		{"x,\"y\"\n\" 7 \",8\n", "comma", []col{{"x", []float64{7}}, {"y", []float64{8}}}},
		// Quoted cells with spaces between them.
		{"\"x\"  \"y\"\n\"1\" 2\n3 \"4\"\n", "space", []col{{"x", []float64{1, 3}}, {"y", []float64{2, 4}}}},
		{"x\ty\n\"1\" \t 2\n", "tab", []col{{"x", []float64{1}}, {"y", []float64{2}}}},
		// A comma inside quotes does not choose the comma layout.
		{"\"a,b\"\n1\n", "space", nil},
		// Line endings: CRLF, a lone CR, none at the end; blank lines.
		{"x,y\r\n1,2\r\n\r\n3,4\r\n", "comma", []col{{"x", []float64{1, 3}}, {"y", []float64{2, 4}}}},
		{"x\ty\r1\t2\r3\t4", "tab", []col{{"x", []float64{1, 3}}, {"y", []float64{2, 4}}}},
		// A UTF-8 byte-order mark, comment lines before the header.
		{"\uFEFFx,y\n1,2\n", "comma", []col{{"x", []float64{1}}, {"y", []float64{2}}}},
		{"# counts per day\n\n# second note\nk\n3\n", "space", []col{{"k", []float64{3}}}},
		// Columns of different lengths: the shorter ends in empty cells, or
		// its rows end early.
		{"a\tb\n1\t2\n3\t\n5\n", "tab", []col{{"a", []float64{1, 3, 5}}, {"b", []float64{2}}}},
		{"a,b\n1,2\n,4\n", "comma", []col{{"a", []float64{1}}, {"b", []float64{2, 4}}}},
		// Trailing separators: an empty, nameless column is dropped.
		{"x,y,\n1,2,\n3,4,\n", "comma", []col{{"x", []float64{1, 3}}, {"y", []float64{2, 4}}}},
		// Many trailing separators.
		{"x,y" + strings.Repeat(",", 1000) + "\n1,2" + strings.Repeat(",", 1000) + "\n", "comma", []col{{"x", []float64{1}}, {"y", []float64{2}}}},
		// A row of empty cells is a blank line.
		{"x,y\n1,2\n,\n3,4\n", "comma", []col{{"x", []float64{1, 3}}, {"y", []float64{2, 4}}}},
		// Unicode names, as the model language allows.
		{"σ\tμ_0\n1\t2\n", "tab", []col{{"σ", []float64{1}}, {"μ_0", []float64{2}}}},
	} {
		tb, err := Parse(tc.src)
		if tc.want == nil {
			// Cases that must fail are in TestParseErrors; here only the
			// layout is checked.
			if err == nil {
				t.Errorf("%q: no error", tc.src)
			}
			continue
		}
		checkTable(t, tc.src, tb, err, tc.sep, tc.want)
	}
}

// TestNumbers checks the cells read as numbers against Go's strconv.ParseFloat
// (an independent reader of decimal literals), and the ones refused.
func TestNumbers(t *testing.T) {
	for _, s := range []string{"0", "-0", "+2", "12", "3.", ".5", "-.5", "1e-3", "2.5E+4", "6.02214076e23",
		"0.1", "1e-400", "4.9e-324", "1.7976931348623157e308", "00012", "123456789012345678901234567890"} {
		v, problem, _ := number(s)
		want, err := strconv.ParseFloat(s, 64)
		if problem != "" || err != nil || v != want || math.Signbit(v) != math.Signbit(want) {
			t.Errorf("number(%q) = %v, %q; strconv says %v, %v", s, v, problem, want, err)
		}
	}
	for _, s := range []string{"", "+", "-", ".", "e5", "1e", "1e+", "1.2.3", "0x10", "1_000", "Inf", "-inf",
		"NaN", "1e400", "-1e400", "1,5", "1 000", "5%", "TRUE", "=A1", "#N/A", "12abc", "٣", "１"} {
		if v, problem, hint := number(s); problem == "" || hint == "" {
			t.Errorf("number(%q) = %v with no problem or no hint (%q, %q)", s, v, problem, hint)
		}
	}
}

// TestParseErrors checks that each malformed table gives an *Error at the
// right line and column, with a message naming what is wrong and a hint.
func TestParseErrors(t *testing.T) {
	for _, tc := range []struct {
		src       string
		line, col int
		msg       string // a part of the message
	}{
		{"", 1, 1, "text is empty"},
		{"\n\n  \n", 4, 1, "text is empty"},
		{"x\ty\n1\tNA\n", 2, 3, `missing value "NA" in column y`},
		{"x,y\n1,#N/A\n", 2, 3, `missing value "#N/A" in column y`},
		{"x,y\n1,2\n3,null\n", 3, 3, `missing value "null" in column y`},
		{"x\ty\n1\t=SUM(A1:A3)\n", 2, 3, `formula "=SUM(A1:A3)" instead of a value in column y`},
		{"x,y\n1,\"=1+2\"\n", 2, 3, `formula "=1+2"`},
		{"x\ty\n1\t#DIV/0!\n", 2, 3, `spreadsheet error value "#DIV/0!" in column y`},
		{"x,y\n1,2\n# later note\n", 3, 1, `comment "# later note" instead of a value in column x`},
		{"x\ty\n1\t1,5\n", 2, 3, `"1,5" is not a number in column y`},
		{"x,y\n1,\"1,234,567\"\n", 2, 3, `"1,234,567" is not a number`},
		{"x\n5%\n", 2, 1, "percentage"},
		{"x\ninf\n", 2, 1, "infinite value"},
		{"x\nTRUE\n", 2, 1, "logical value"},
		{"x\n1e999\n", 2, 1, "too large"},
		{"x\tdose\n1\tabc\n", 2, 3, `"abc" is not a number in column dose`},
		// Empty cells above a value; a row too long; a short row with spaces.
		{"x\ty\n1\t\n2\t4\n", 2, 3, "empty cell in column y, above its value at 3:3"},
		{"x,y\n1,2\n3\n5,6\n", 3, 2, "empty cell in column y, above its value at 4:3"},
		{"x,y\n\"\",2\n3,4\n", 2, 1, "empty cell in column x"},
		{"x\ty\n1\t2\t3\n", 2, 5, "value in cell 3 of the row, but the header names 2 columns"},
		{"x,y\n1,2" + strings.Repeat(",", 1000) + "3\n", 2, 1004, "value in cell 1002 of the row, but the header names 2 columns"},
		{"x\n1" + strings.Repeat(",", 1000) + "2\n", 2, 1, "cell is too long"},
		{"x y z\n1 2\n", 2, 4, "row has 2 values, but the header names 3 columns (z is missing)"},
		// The header.
		{"1\t2\n3\t4\n", 1, 1, "the first row holds numbers"},
		{"x\tsum\n1\t2\n", 1, 3, `column name "sum" is the name of a function`},
		{"param,b\n1,2\n", 1, 1, "is a keyword"},
		{"x,pi\n1,2\n", 1, 3, "built-in constant"},
		{"weight (kg)\tb\n1\t2\n", 1, 1, `column name "weight (kg)" contains ' '`},
		{"2x,y\n1,2\n", 1, 1, "does not start with a letter"},
		{"x;y\n1;2\n", 1, 1, "contains ';'"},
		{"a,\u202eb\n1,2\n", 1, 3, "invisible character U+202E"},
		{"x,y,x\n1,2,3\n", 1, 5, "column x is named twice (also at 1:1)"},
		{"x,,y\n1,2,3\n", 2, 3, "value in column 2, which has no name"},
		{"x,y\n1,\n", 1, 3, "column y has no values"},
		{"x\n", 1, 1, "column x has no values"},
		// Quotes.
		{"x,y\n\"1,2\n", 2, 1, "the quote opened at 2:1 is never closed"},
		{"x,y\n\"1\"x,2\n", 2, 4, `unexpected "x" after the closing quote`},
		{"x,y\n1,2\n3,\"4\"\"\n", 3, 3, "never closed"},
		// Encodings and binary text.
		{"\xff\xfex\x00y\x00", 1, 1, "UTF-16"},
		{"\xfe\xff\x00x", 1, 1, "UTF-16"},
		{"x\x00\ny\n", 1, 2, "NUL byte"},
		{"x,y\n1,2\nb\xe9ta,3\n", 3, 2, "invalid UTF-8 byte 0xe9"},
		{"\uFEFFx,y\n1,abc\n", 2, 3, "not a number"},
		// Rows copied with another separator than the header's.
		{"x\ty\n1 2\n", 2, 1, `"1 2" is not a number in column x`},
		{"x,y\n1;2,3\n", 2, 1, `"1;2" is not a number in column x`},
		// A long cell.
		{"x\n" + strings.Repeat("1", MaxCell+1) + "\n", 2, 1, "cell is too long"},
		{"x\n\"" + strings.Repeat("1", 3*MaxCell) + "\n", 2, 1, "cell is too long"},
	} {
		_, err := Parse(tc.src)
		var e *Error
		if !errors.As(err, &e) {
			t.Errorf("%q: error %v (%T), want an *Error", tc.src, err, err)
			continue
		}
		if e.Line != tc.line || e.Col != tc.col || !strings.Contains(e.Msg, tc.msg) {
			t.Errorf("%q:\n got %v\nwant %d:%d: ...%s...", tc.src, err, tc.line, tc.col, tc.msg)
		}
		if e.Hint == "" && !strings.Contains(tc.msg, "twice") && !strings.Contains(tc.msg, "too many") {
			t.Logf("%q: no hint for %v", tc.src, err)
		}
		if strings.Contains(tc.msg, `"1 2"`) || strings.Contains(tc.msg, `"1;2"`) {
			if !strings.Contains(e.Hint, "use one separator throughout") {
				t.Errorf("%q: hint %q does not point at the separators", tc.src, e.Hint)
			}
		}
	}
}

// TestLimits checks each documented limit: just inside it is read, just
// beyond it is an *Error saying so.
func TestLimits(t *testing.T) {
	column := func(n int) string {
		var b strings.Builder
		b.WriteString("k\n")
		for i := 0; i < n; i++ {
			b.WriteString("1\n")
		}
		return b.String()
	}
	if tb, err := Parse(column(MaxColumnValues)); err != nil || len(tb.Columns[0].Values) != MaxColumnValues {
		t.Errorf("a column of %d values: %v", MaxColumnValues, err)
	}
	wantErr := func(what, src, msg string) {
		t.Helper()
		_, err := Parse(src)
		var e *Error
		if !errors.As(err, &e) || !strings.Contains(e.Msg, msg) {
			t.Errorf("%s: error %v, want one saying %q", what, err, msg)
		}
	}
	wantErr("a column too long", column(MaxColumnValues+1), "more than 100000 values")

	names := make([]string, MaxColumns+1)
	for i := range names {
		names[i] = "c" + strconv.Itoa(i)
	}
	ones := strings.TrimSuffix(strings.Repeat("1,", MaxColumns), ",")
	if tb, err := Parse(strings.Join(names[:MaxColumns], ",") + "\n" + ones + "\n"); err != nil || len(tb.Columns) != MaxColumns {
		t.Errorf("%d columns: %v", MaxColumns, err)
	}
	wantErr("too many columns", strings.Join(names, ",")+"\n"+ones+",1\n", "too many columns")

	// MaxValues in all: 5 columns of 80001 rows hold 400005 values.
	var b strings.Builder
	b.WriteString(strings.Join(names[:5], ",") + "\n")
	row := strings.TrimSuffix(strings.Repeat("1,", 5), ",") + "\n"
	for i := 0; i < 80001; i++ {
		b.WriteString(row)
	}
	wantErr("too many values", b.String(), "more than 400000 values")

	big := "x\n" + strings.Repeat("1\n", MaxBytes/2)
	wantErr("too many bytes", big, "data is too large")
}

// TestErrorText checks the error's printed form: line:col: message.
func TestErrorText(t *testing.T) {
	_, err := Parse("x\ty\n1\tNA\n")
	if got, want := err.Error(), `2:3: missing value "NA" in column y`; got != want {
		t.Errorf("Error() = %q, want %q", got, want)
	}
}

// TestRead reads through an io.Reader, with the same limit.
func TestRead(t *testing.T) {
	tb, err := Read(strings.NewReader("a,b\n1,2\n"))
	checkTable(t, "a,b", tb, err, "comma", []col{{"a", []float64{1}}, {"b", []float64{2}}})
	if _, err := Read(strings.NewReader("x\n" + strings.Repeat("1\n", MaxBytes/2))); err == nil {
		t.Error("Read of more than MaxBytes: no error")
	}
}

// TestDetail shows the line with a caret under the place, tabs kept so the
// caret lines up, and the hint.
func TestDetail(t *testing.T) {
	src := "x\ty\r\n1\tNA\r\n"
	_, err := Parse(src)
	got := err.(*Error).Detail(src)
	want := "2:3: missing value \"NA\" in column y\n    1\tNA\n     \t^\nhint: every cell of a column needs a number: fill it in, or remove the row"
	if got != want {
		t.Errorf("Detail:\n%s\nwant\n%s", got, want)
	}
	// A long line is shown around the place.
	long := "x,y\n" + strings.Repeat("1", 150) + ",abc\n"
	_, err = Parse(long)
	d := err.(*Error).Detail(long)
	lines := strings.Split(d, "\n")
	if len(lines) < 3 || strings.Index(lines[2], "^") != strings.Index(lines[1], "abc") {
		t.Errorf("caret not under the cell:\n%s", d)
	}
}

// TestCSV writes a ragged tab-separated table as CSV and reads it back.
func TestCSV(t *testing.T) {
	tb, err := Parse("a\tb\n0.1\t-2\n1e-300\t\n3\n")
	if err != nil {
		t.Fatal(err)
	}
	if got, want := tb.CSV(), "a,b\n0.1,-2\n1e-300,\n3,\n"; got != want {
		t.Errorf("CSV:\n%q\nwant\n%q", got, want)
	}
	again, err := Parse(tb.CSV())
	checkTable(t, tb.CSV(), again, err, "comma", []col{{"a", []float64{0.1, 1e-300, 3}}, {"b", []float64{-2}}})
}

// TestSeparatorFloods reads texts of MaxBytes made of separators, quotes or
// names only and checks that each is refused (or read) with a bounded
// amount of memory: a row keeps at most MaxColumns cells, so a line of four
// million commas must not build a slice of four million cells (it once
// allocated about 1 GB).
func TestSeparatorFloods(t *testing.T) {
	for _, src := range []string{
		strings.Repeat(",", MaxBytes),
		strings.Repeat("\t", MaxBytes),
		"x,y\n" + strings.Repeat(",", MaxBytes-4),
		strings.Repeat("a ", MaxBytes/2),
		"x\n" + strings.Repeat("\"\"", MaxBytes/2-2),
		strings.Repeat("#\n", MaxBytes/2),
	} {
		var before, after runtime.MemStats
		runtime.GC()
		runtime.ReadMemStats(&before)
		_, err := Parse(src)
		runtime.ReadMemStats(&after)
		if err == nil {
			t.Errorf("%q...: no error", src[:8])
		}
		if used := after.TotalAlloc - before.TotalAlloc; used > 64<<20 {
			t.Errorf("%q...: %d MB allocated for a text of %d MB", src[:8], used>>20, MaxBytes>>20)
		}
	}
}
