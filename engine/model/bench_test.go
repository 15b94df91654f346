package model

import (
	"fmt"
	"strings"
	"testing"
)

// benchModel is a typical larger model: two data vectors of 2000 values and
// a two-parameter regression with Student-t errors.
func benchModel() string {
	var x, y strings.Builder
	for i := 0; i < 2000; i++ {
		if i > 0 {
			x.WriteString(", ")
			y.WriteString(", ")
		}
		fmt.Fprintf(&x, "%g", float64(i)/100)
		fmt.Fprintf(&y, "%.3f", 0.5+1.5*float64(i)/100)
	}
	return "# regression\nx = [" + x.String() + "]\ny = [" + y.String() + "]\n" +
		"param a\nparam b in [0, inf]\npred = a + b*x\n" +
		"sum(ld_student(y, 4, pred, 0.2)) + ld_normal(a, 0, 10) + ld_gamma(b, 2, 1)\n"
}

func BenchmarkParse(b *testing.B) {
	src := benchModel()
	b.SetBytes(int64(len(src)))
	for b.Loop() {
		if _, err := Parse(src); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkParseSmall(b *testing.B) {
	src := "-x^2/2 - (y-1)^2/8 + x*y/4"
	for b.Loop() {
		if _, err := Parse(src); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkFormat(b *testing.B) {
	m, err := Parse(benchModel())
	if err != nil {
		b.Fatal(err)
	}
	for b.Loop() {
		_ = Format(m)
	}
}
