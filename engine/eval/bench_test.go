package eval

import (
	"math"
	"strconv"
	"strings"
	"testing"

	"bellcheck/engine/model"
)

// The benchmarks compare the compiled tape with hand-written Go on the same
// work; run them side by side:
//
//	go test -run='^$' -bench=. -benchtime=200ms ./engine/eval/
//
// and under WebAssembly with
//
//	GOOS=js GOARCH=wasm go test -exec="$(go env GOROOT)/lib/wasm/go_js_wasm_exec" -run='^$' -bench=. ./engine/eval/

const bananaSrc = "param x\nparam y\n-x^2/200 - (y + 0.05*x^2 - 5)^2/2\n"

func bananaHand(x, y float64) float64 {
	u := y + 0.05*x*x - 5
	return -x*x/200 - u*u/2
}

func mustCompile(tb testing.TB, src string) *Evaluator {
	tb.Helper()
	m, err := model.Parse(src)
	if err != nil {
		tb.Fatalf("parse: %v", err)
	}
	ev, err := Compile(m)
	if err != nil {
		tb.Fatalf("compile: %v", err)
	}
	return ev
}

// bananaGrid is a 512x512 grid over [-20, 20] x [-10, 15], as columns.
func bananaGrid() [][]float64 {
	const n = 512
	xs := make([]float64, n*n)
	ys := make([]float64, n*n)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			xs[i*n+j] = -20 + 40*float64(i)/(n-1)
			ys[i*n+j] = -10 + 25*float64(j)/(n-1)
		}
	}
	return [][]float64{xs, ys}
}

func BenchmarkBananaGridHand(b *testing.B) {
	cols := bananaGrid()
	out := make([]float64, len(cols[0]))
	b.ReportAllocs()
	for b.Loop() {
		xs, ys := cols[0], cols[1][:len(cols[0])]
		out := out[:len(xs)]
		for i := range xs {
			out[i] = bananaHand(xs[i], ys[i])
		}
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(len(out)), "ns/point")
}

func BenchmarkBananaGridBlock(b *testing.B) {
	ev := mustCompile(b, bananaSrc)
	cols := bananaGrid()
	out := make([]float64, len(cols[0]))
	b.ReportAllocs()
	for b.Loop() {
		ev.LogDensityBlock(cols, out)
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(len(out)), "ns/point")
}

// BenchmarkBananaBoundedGridBlock is the banana with supports that hold on
// the whole grid: the cost of the four support guards beside the free model.
func BenchmarkBananaBoundedGridBlock(b *testing.B) {
	ev := mustCompile(b, "param x in [-40, 40]\nparam y in [-40, 40]\n-x^2/200 - (y + 0.05*x^2 - 5)^2/2\n")
	cols := bananaGrid()
	out := make([]float64, len(cols[0]))
	b.ReportAllocs()
	for b.Loop() {
		ev.LogDensityBlock(cols, out)
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(len(out)), "ns/point")
}

func BenchmarkBananaPointValue(b *testing.B) {
	ev := mustCompile(b, bananaSrc)
	x := []float64{1.5, 2}
	b.ReportAllocs()
	var s float64
	for b.Loop() {
		s += ev.LogDensity(x)
	}
	sink = s
}

func BenchmarkBananaPointDerivs(b *testing.B) {
	ev := mustCompile(b, bananaSrc)
	x := []float64{1.5, 2}
	g := make([]float64, 2)
	h := make([]float64, 4)
	b.ReportAllocs()
	var s float64
	for b.Loop() {
		s += ev.LogDensityDerivs(x, g, h)
	}
	sink = s
}

var sink float64

// gaussData is invented data for the likelihood benchmark: a line with noise.
func gaussData(n int) (t, y []float64) {
	t = make([]float64, n)
	y = make([]float64, n)
	for i := range t {
		t[i] = float64(i) / float64(n)
		y[i] = 1.5 + 2*t[i] + 0.3*math.Sin(float64(7*i))
	}
	return t, y
}

func vectorLiteral(v []float64) string {
	parts := make([]string, len(v))
	for i, x := range v {
		parts[i] = strconv.FormatFloat(x, 'g', -1, 64)
	}
	return "[" + strings.Join(parts, ", ") + "]"
}

func gaussSrc(n int) string {
	t, y := gaussData(n)
	return "param a\nparam b\nparam s\nt = " + vectorLiteral(t) + "\ny = " + vectorLiteral(y) +
		"\n-sum((y - a - b*t)^2) / (2*s^2) - len(y)*log(s)\n"
}

func gaussHand(t, y []float64, a, b, s float64) float64 {
	var ss float64
	y = y[:len(t)]
	for i := range t {
		r := y[i] - a - b*t[i]
		ss += r * r
	}
	return -ss/(2*s*s) - float64(len(y))*math.Log(s)
}

func BenchmarkGauss200Hand(b *testing.B) {
	t, y := gaussData(200)
	b.ReportAllocs()
	var s float64
	for b.Loop() {
		s += gaussHand(t, y, 1.4, 2.1, 0.35)
	}
	sink = s
}

func BenchmarkGauss200Point(b *testing.B) {
	ev := mustCompile(b, gaussSrc(200))
	x := []float64{1.4, 2.1, 0.35}
	b.ReportAllocs()
	var s float64
	for b.Loop() {
		s += ev.LogDensity(x)
	}
	sink = s
}

func BenchmarkGauss200Derivs(b *testing.B) {
	ev := mustCompile(b, gaussSrc(200))
	x := []float64{1.4, 2.1, 0.35}
	g := make([]float64, 3)
	h := make([]float64, 9)
	b.ReportAllocs()
	var s float64
	for b.Loop() {
		s += ev.LogDensityDerivs(x, g, h)
	}
	sink = s
}

func BenchmarkGauss200Block(b *testing.B) {
	ev := mustCompile(b, gaussSrc(200))
	const n = 256
	cols := [][]float64{make([]float64, n), make([]float64, n), make([]float64, n)}
	for i := 0; i < n; i++ {
		cols[0][i] = 1 + float64(i)/n
		cols[1][i] = 2
		cols[2][i] = 0.3 + float64(i)/n
	}
	out := make([]float64, n)
	b.ReportAllocs()
	for b.Loop() {
		ev.LogDensityBlock(cols, out)
	}
}

// A four-parameter model with special functions, for the cost of jets at
// d = 4 (no target; for the record).
const fourSrc = "param a\nparam b\nparam c\nparam d\nld_normal(a, 0, 1) + ld_gamma(exp(b), 2, 1) + b + ld_student(c, 4, a, exp(b)) + log1pexp(d*c) - d^2/2\n"

func BenchmarkFourPointValue(b *testing.B) {
	ev := mustCompile(b, fourSrc)
	x := []float64{0.3, -0.2, 0.5, 1.1}
	b.ReportAllocs()
	var s float64
	for b.Loop() {
		s += ev.LogDensity(x)
	}
	sink = s
}

func BenchmarkFourPointDerivs(b *testing.B) {
	ev := mustCompile(b, fourSrc)
	x := []float64{0.3, -0.2, 0.5, 1.1}
	g := make([]float64, 4)
	h := make([]float64, 16)
	b.ReportAllocs()
	var s float64
	for b.Loop() {
		s += ev.LogDensityDerivs(x, g, h)
	}
	sink = s
}
