package data

import (
	"errors"
	"math"
	"strings"
	"testing"

	"bellcheck/engine/model"
)

// FuzzDataFile checks that Parse never panics, that every failure is an
// *Error at a place inside the text with a message, and that every table it
// reads is valid for model.ParseWith and reads back the same when written
// out again as comma-separated text. The seed corpus
// (testdata/fuzz/FuzzDataFile) has odd quoting, every separator, other
// encodings, huge fields and formulas in cells.
func FuzzDataFile(f *testing.F) {
	f.Fuzz(func(t *testing.T, src string) {
		tb, err := Parse(src)
		if err != nil {
			if tb != nil {
				t.Fatal("a table returned with an error")
			}
			var e *Error
			if !errors.As(err, &e) {
				t.Fatalf("error %v (%T), want an *Error", err, err)
			}
			if e.Msg == "" {
				t.Fatal("an error with no message")
			}
			if e.Line < 1 || e.Col < 1 {
				t.Fatalf("error at %d:%d: %v", e.Line, e.Col, err)
			}
			end := positionOf(src, len(src))
			if e.Line > end.Line || (e.Line == end.Line && e.Col > end.Col+1) {
				t.Fatalf("error at %d:%d is past the end of the text (%d:%d): %v", e.Line, e.Col, end.Line, end.Col, err)
			}
			return
		}
		checkReadTable(t, tb)
		again, err := Parse(tb.CSV())
		if err != nil {
			t.Fatalf("the table written back does not parse: %v\n%s", err, tb.CSV())
		}
		if len(again.Columns) != len(tb.Columns) {
			t.Fatalf("%d columns, then %d", len(tb.Columns), len(again.Columns))
		}
		for i, c := range tb.Columns {
			d := again.Columns[i]
			if c.Name != d.Name || len(c.Values) != len(d.Values) {
				t.Fatalf("column %s (%d values) read back as %s (%d values)", c.Name, len(c.Values), d.Name, len(d.Values))
			}
			for j := range c.Values {
				if math.Float64bits(c.Values[j]) != math.Float64bits(d.Values[j]) {
					t.Fatalf("column %s value %d: %v read back as %v", c.Name, j+1, c.Values[j], d.Values[j])
				}
			}
		}
	})
}

// checkReadTable checks the invariants of a table Parse returned.
func checkReadTable(t *testing.T, tb *Table) {
	t.Helper()
	if len(tb.Columns) == 0 || len(tb.Columns) > MaxColumns {
		t.Fatalf("%d columns", len(tb.Columns))
	}
	total := 0
	seen := map[string]bool{}
	for _, c := range tb.Columns {
		if p := model.NameProblem(c.Name); p != "" || seen[c.Name] {
			t.Fatalf("column name %q: %s (twice: %v)", c.Name, p, seen[c.Name])
		}
		seen[c.Name] = true
		if len(c.Values) == 0 || len(c.Values) > MaxColumnValues {
			t.Fatalf("column %s has %d values", c.Name, len(c.Values))
		}
		for _, v := range c.Values {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				t.Fatalf("column %s holds %v", c.Name, v)
			}
		}
		total += len(c.Values)
	}
	if total > MaxValues {
		t.Fatalf("%d values in all", total)
	}
	// Every column can be used by a model, whose parameter has a name no
	// column has.
	param := "m"
	for seen[param] {
		param += "m"
	}
	var terms []string
	for _, c := range tb.Columns {
		terms = append(terms, "sum("+c.Name+")")
	}
	if _, err := model.ParseWith(strings.Join(terms, " + ")+" - "+param+"^2", tb.Vectors()); err != nil {
		t.Fatalf("model.ParseWith refuses the table: %v", err)
	}
}
