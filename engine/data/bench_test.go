package data

import (
	"strconv"
	"strings"
	"testing"

	"bellcheck/engine/model"
)

// bigTable is a tab-separated table of two columns of MaxColumnValues
// values each (about 1.6 MB), as a spreadsheet would copy it.
func bigTable() string {
	var b strings.Builder
	b.WriteString("x\ty\n")
	for i := 0; i < MaxColumnValues; i++ {
		b.WriteString(strconv.FormatFloat(float64(i)*0.001, 'g', -1, 64))
		b.WriteByte('\t')
		b.WriteString(strconv.FormatFloat(1+float64(i%97)*0.37, 'g', -1, 64))
		b.WriteByte('\n')
	}
	return b.String()
}

// BenchmarkParse reads the largest columns a table may have.
func BenchmarkParse(b *testing.B) {
	src := bigTable()
	b.SetBytes(int64(len(src)))
	b.ReportAllocs()
	for b.Loop() {
		if _, err := Parse(src); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkParseWith attaches those columns to a model and checks it.
func BenchmarkParseWith(b *testing.B) {
	tb, err := Parse(bigTable())
	if err != nil {
		b.Fatal(err)
	}
	vs := tb.Vectors()
	b.ReportAllocs()
	for b.Loop() {
		if _, err := model.ParseWith("-sum((y - a - c*x)^2)/2", vs); err != nil {
			b.Fatal(err)
		}
	}
}
