package grid

import (
	"math"
	"math/rand/v2"
	"sort"
	"testing"
)

// Levels agrees with the definition computed by a full sort: the level is
// the density of the node at which the cumulative mass, taken from the
// densest node down, first reaches the share.
func TestLevelsAgainstFullSort(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 5))
	for trial := 0; trial < 20; trial++ {
		n := 1 + rng.IntN(5000)
		dens := make([]float64, n)
		mass := make([]float64, n)
		for i := range dens {
			// Densities over 80 orders of magnitude, some zero.
			if rng.IntN(10) > 0 {
				dens[i] = math.Exp(-80 * rng.Float64())
				mass[i] = dens[i] * (0.5 + rng.Float64())
			}
		}
		fr := []float64{0.39, 0.86, 0.99, 0.5}
		got := Levels(dens, mass, fr)
		idx := make([]int, 0, n)
		total := 0.0
		for i := range dens {
			if dens[i] > 0 {
				idx = append(idx, i)
				total += mass[i]
			}
		}
		sort.Slice(idx, func(a, b int) bool { return dens[idx[a]] > dens[idx[b]] })
		for k, f := range fr {
			want := math.NaN()
			acc := 0.0
			for _, i := range idx {
				acc += mass[i]
				want = dens[i]
				if acc >= f*total {
					break
				}
			}
			// Nodes beyond 60 in log density below the top share the last
			// bin; only shares reached above it are exact.
			if dens[idx[0]]/want > math.Exp(59) {
				continue
			}
			if got[k] != want && !(math.IsNaN(got[k]) && math.IsNaN(want)) {
				t.Errorf("trial %d, share %g: level %g, full sort %g", trial, f, got[k], want)
			}
		}
	}
}
