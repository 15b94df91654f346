package eval

import (
	"math"
	"testing"
)

// The 200-step Lorenz-63 window cost (lorenzWindow in dynamics_test.go:
// 200 RK4 steps of 0.01, a background term and 200 observations of x),
// evaluated on a block of grid points by the compiled tape and by a plain
// Go loop (lorenzCostLoop). Run side by side:
//
//	go test -run='^$' -bench=Lorenz ./engine/eval/
//	GOOS=js GOARCH=wasm go test -run='^$' -bench=Lorenz -exec="$(go env GOROOT)/lib/wasm/go_js_wasm_exec" ./engine/eval/

// lorenzBlock is a block of 4096 starting states around (1, -1, 21).
func lorenzBlock() [][]float64 {
	const n = 4096
	cols := [][]float64{make([]float64, n), make([]float64, n), make([]float64, n)}
	for i := 0; i < n; i++ {
		cols[0][i] = 1 + 0.5*math.Sin(float64(i))
		cols[1][i] = -1 + 0.5*math.Cos(float64(3*i))
		cols[2][i] = 21 + 0.5*math.Sin(float64(7*i))
	}
	return cols
}

// lorenzHand is the window cost written out by hand in scalar variables,
// the way one would code it for speed.
func lorenzHand(x, y, z float64, xo []float64) float64 {
	const h, s, r, bb = 0.01, 10.0, 28.0, 8.0 / 3
	c := ((x-1)*(x-1) + (y+1)*(y+1) + (z-21)*(z-21)) / 8
	for _, o := range xo {
		k1x, k1y, k1z := s*(y-x), x*(r-z)-y, x*y-bb*z
		x2, y2, z2 := x+h/2*k1x, y+h/2*k1y, z+h/2*k1z
		k2x, k2y, k2z := s*(y2-x2), x2*(r-z2)-y2, x2*y2-bb*z2
		x3, y3, z3 := x+h/2*k2x, y+h/2*k2y, z+h/2*k2z
		k3x, k3y, k3z := s*(y3-x3), x3*(r-z3)-y3, x3*y3-bb*z3
		x4, y4, z4 := x+h*k3x, y+h*k3y, z+h*k3z
		k4x, k4y, k4z := s*(y4-x4), x4*(r-z4)-y4, x4*y4-bb*z4
		x += h / 6 * (k1x + 2*k2x + 2*k3x + k4x)
		y += h / 6 * (k1y + 2*k2y + 2*k3y + k4y)
		z += h / 6 * (k1z + 2*k2z + 2*k3z + k4z)
		d := x - o
		c += d * d / (2 * 0.3 * 0.3)
	}
	return -c
}

func BenchmarkLorenz200Hand(b *testing.B) {
	xo := dataVector(b, lorenzWindow(200), "xo")
	cols := lorenzBlock()
	out := make([]float64, len(cols[0]))
	if got, want := lorenzHand(1, -1, 21, xo), lorenzCostLoop([]float64{1, -1, 21}, xo); math.Abs(got-want) > 1e-9*math.Abs(want) {
		b.Fatalf("hand-written cost %v, test loop %v", got, want)
	}
	b.ReportAllocs()
	for b.Loop() {
		for i := range out {
			out[i] = lorenzHand(cols[0][i], cols[1][i], cols[2][i], xo)
		}
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(len(out)), "ns/point")
}

func BenchmarkLorenz200Block(b *testing.B) {
	ev := mustCompile(b, lorenzWindow(200))
	cols := lorenzBlock()
	out := make([]float64, len(cols[0]))
	b.ReportAllocs()
	for b.Loop() {
		ev.LogDensityBlock(cols, out)
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(len(out)), "ns/point")
}

func BenchmarkLorenz200Derivs(b *testing.B) {
	ev := mustCompile(b, lorenzWindow(200))
	x := []float64{1, -1, 21}
	g := make([]float64, 3)
	h := make([]float64, 9)
	b.ReportAllocs()
	for b.Loop() {
		ev.LogDensityDerivs(x, g, h)
	}
}

func BenchmarkLorenz200Compile(b *testing.B) {
	src := lorenzWindow(200)
	b.ReportAllocs()
	for b.Loop() {
		mustCompile(b, src)
	}
}
