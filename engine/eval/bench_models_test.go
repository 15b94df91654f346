package eval

import (
	"os"
	"path/filepath"
	"testing"
)

// Benchmarks of the models with data vectors that dominate the analyses'
// time (the grid calls LogDensityBlock at 90k to 2.8M points):
//
//	go test -run='^$' -bench='Model' -benchtime=200ms ./engine/eval/
//
// Block benchmarks report ns/point over blocks of 1024 points (the grid's
// block size) spread over the region the grid covers.

// doseSrc is a 2-D logistic dose-response model (invented data).
const doseSrc = `dose = [0.5, 1, 2, 4, 8]
n    = [12, 12, 12, 12, 12]
k    = [1, 3, 6, 9, 11]
param a
param b
p = logistic(a + b * log(dose))
sum(ld_binomial(k, n, p)) + ld_normal(a, 0, 3) + ld_normal(b, 0, 3)
`

// benchModelSrc reads a model of testdata/reference/bench.
func benchModelSrc(tb testing.TB, file string) string {
	tb.Helper()
	src, err := os.ReadFile(filepath.Join("..", "..", "testdata", "reference", "bench", file))
	if err != nil {
		tb.Fatal(err)
	}
	return string(src)
}

// benchPoint is a point near each model's mode; benchSpread the half-width
// of the box the block points fill around it.
type benchCase struct {
	name   string
	src    func(testing.TB) string
	point  []float64
	spread []float64
}

var benchCases = []benchCase{
	{"Counts4D", func(tb testing.TB) string { return benchModelSrc(tb, "counts_4d.txt") },
		[]float64{1.9, 0.35, 0.45, 0.05}, []float64{0.3, 0.3, 0.3, 0.3}},
	{"Sensor3D", func(tb testing.TB) string { return benchModelSrc(tb, "sensor_3d.txt") },
		[]float64{0.1, 1.0, 0.02}, []float64{0.2, 0.2, 0.05}},
	{"Dose2D", func(testing.TB) string { return doseSrc },
		[]float64{-1.2, 1.5}, []float64{1.5, 1.0}},
}

// benchBlock returns 1024 points as columns, on a lattice around c.point.
func (c benchCase) benchBlock() [][]float64 {
	const n = 1024
	d := len(c.point)
	cols := make([][]float64, d)
	for k := range cols {
		cols[k] = make([]float64, n)
	}
	for i := 0; i < n; i++ {
		m := i
		for k := 0; k < d; k++ {
			// Coordinate k cycles with a different period per axis.
			per := 7 + 4*k
			t := float64(m%per)/float64(per-1)*2 - 1
			m /= 2
			cols[k][i] = c.point[k] + c.spread[k]*t
		}
	}
	return cols
}

func BenchmarkModelBlock(b *testing.B) {
	for _, c := range benchCases {
		b.Run(c.name, func(b *testing.B) {
			ev := mustCompile(b, c.src(b))
			cols := c.benchBlock()
			out := make([]float64, len(cols[0]))
			b.ReportAllocs()
			for b.Loop() {
				ev.LogDensityBlock(cols, out)
			}
			b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(len(out)), "ns/point")
		})
	}
}

func BenchmarkModelDerivs(b *testing.B) {
	for _, c := range benchCases {
		b.Run(c.name, func(b *testing.B) {
			ev := mustCompile(b, c.src(b))
			d := len(c.point)
			g := make([]float64, d)
			h := make([]float64, d*d)
			b.ReportAllocs()
			var s float64
			for b.Loop() {
				s += ev.LogDensityDerivs(c.point, g, h)
			}
			sink = s
		})
	}
}

func BenchmarkModelPoint(b *testing.B) {
	for _, c := range benchCases {
		b.Run(c.name, func(b *testing.B) {
			ev := mustCompile(b, c.src(b))
			b.ReportAllocs()
			var s float64
			for b.Loop() {
				s += ev.LogDensity(c.point)
			}
			sink = s
		})
	}
}
