package engine

import (
	"math"
	"testing"
)

// TestMirrorModesEqualMasses: a two-component mixture with an unknown
// weight and two unknown means has two modes that are mirror images (the
// components' labels swapped), so they hold equal masses (an identity);
// the scouting grid, whose spacing was 1.3 of the modes' sd, split them 6
// and 94 % in the several-modes warning.
func TestMirrorModesEqualMasses(t *testing.T) {
	const src = `# two-component mixture with unknown weight and means, known sds
y = [-1.2, -0.8, -1.5, -0.3, 2.1, 2.6, 1.8, 2.9, 2.2, -0.9]
param w in [0, 1]
param m1
param m2
a = log(w) + ld_normal(y, m1, 0.7)
b = log(1 - w) + ld_normal(y, m2, 0.7)
sum(a + log1pexp(b - a)) + ld_normal(m1, 0, 5) + ld_normal(m2, 0, 5)
`
	res := analyseSource(t, src, Options{})
	if len(res.Modes) != 2 {
		t.Fatalf("%d modes, want 2 (%s)", len(res.Modes), codeList(res))
	}
	for _, m := range res.Modes {
		if math.Abs(m.Mass-0.5) > 1e-6 {
			t.Errorf("mode at %v holds %.4f of the mass, want 0.5", m.X, m.Mass)
		}
	}
	if e := math.Abs(res.Exact.Mean[0] - 0.5); e > 1e-8 {
		t.Errorf("mean of w = %.10f, want 0.5 (the mirror symmetry)", res.Exact.Mean[0])
	}
	if e := math.Abs(res.Exact.Mean[1] - res.Exact.Mean[2]); e > 1e-8 {
		t.Errorf("means of m1 and m2 differ by %.3g, want equal", e)
	}
}
