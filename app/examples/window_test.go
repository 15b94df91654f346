package examples

import (
	"testing"

	"bellcheck/engine/eval"
	"bellcheck/engine/model"
)

// localMaxima counts the strict local maxima of the example's log-density
// along x0 on [-4, 12] (2001 points), with y0 and z0 at the background's
// 5 and 13.
func localMaxima(t *testing.T, id string) int {
	t.Helper()
	e, ok := ByID(id)
	if !ok {
		t.Fatalf("no example %s", id)
	}
	m, err := model.Parse(e.Source)
	if err != nil {
		t.Fatal(err)
	}
	ev, err := eval.Compile(m)
	if err != nil {
		t.Fatal(err)
	}
	const n = 2001
	cols := [][]float64{make([]float64, n), make([]float64, n), make([]float64, n)}
	for i := 0; i < n; i++ {
		cols[0][i] = -4 + 16*float64(i)/(n-1)
		cols[1][i], cols[2][i] = 5, 13
	}
	out := make([]float64, n)
	ev.LogDensityBlock(cols, out)
	count := 0
	for i := 1; i+1 < n; i++ {
		if out[i] > out[i-1] && out[i] > out[i+1] {
			count++
		}
	}
	return count
}

// The longer the assimilation window of a chaotic system, the more local
// minima its cost has (Pires, Vautard and Talagrand 1996, Tellus A 48): along
// a line through the starting states, the short window's cost has one
// minimum and the long window's several.
func TestLongWindowHasMoreMinima(t *testing.T) {
	short, long := localMaxima(t, "lorenz-short"), localMaxima(t, "lorenz-long")
	t.Logf("local minima of the cost along x0: short window %d, long window %d", short, long)
	if short != 1 || long < 3 {
		t.Errorf("local minima along x0: short window %d, long window %d; want 1 and several", short, long)
	}
}
