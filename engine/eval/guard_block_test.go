package eval

import (
	"math"
	"testing"
)

// TestGuardsInBlocks: the block tape's support guards give what point
// evaluation gives, inside (the density), outside (-Inf), on the bound
// (inside for a closed support) and at a NaN coordinate (NaN).
func TestGuardsInBlocks(t *testing.T) {
	ev := mustCompile(t, "param x in [0, 2]\nparam y in [-1, inf]\n-x^2/2 - y^2/2 + ld_gamma(x + 1, 2, 1)\n")
	pts := [][2]float64{{1, 0}, {0, 0}, {2, -1}, {-0.1, 0}, {2.1, 0}, {1, -1.5}, {math.NaN(), 0}, {1, math.NaN()}, {1, math.Inf(1)}}
	cols := [][]float64{make([]float64, len(pts)), make([]float64, len(pts))}
	for i, p := range pts {
		cols[0][i], cols[1][i] = p[0], p[1]
	}
	out := make([]float64, len(pts))
	ev.LogDensityBlock(cols, out)
	for i, p := range pts {
		want := ev.LogDensity(p[:])
		same := out[i] == want || math.IsNaN(out[i]) && math.IsNaN(want)
		if !same {
			t.Errorf("block at %v = %v, point evaluation %v", p, out[i], want)
		}
	}
	// Outside the support the density is -Inf; a NaN coordinate gives NaN.
	if !math.IsInf(out[3], -1) || !math.IsInf(out[4], -1) || !math.IsInf(out[5], -1) {
		t.Errorf("outside the support: %v %v %v, want -Inf", out[3], out[4], out[5])
	}
	if !math.IsNaN(out[6]) || !math.IsNaN(out[7]) {
		t.Errorf("NaN coordinates: %v %v, want NaN", out[6], out[7])
	}
	if math.IsInf(out[1], 0) || math.IsInf(out[2], 0) {
		t.Errorf("on the closed bounds: %v %v, want finite", out[1], out[2])
	}
}
