package quadrature

import (
	"context"
	"math"
	"sort"
	"testing"
)

// The pair rule on a 3-D equicorrelated normal (rho 0.95): its nodes'
// shares sum to 1, its densest node is the bivariate normal's peak (closed
// form, unit variances, correlation rho), and the level enclosing the
// share f of the mass is (1 - f) / (2 pi sqrt(1 - rho^2)) (the Mahalanobis
// square of a bivariate normal is chi-square with 2 dof: closed form).
// A node's share counts wholly on the side of a contour where the node
// lies, so the levels carry an error of the order of the spacing; on the
// sinh map it is a bias: the cells grow outwards, the shares of the nodes
// just inside a contour reach beyond it, and the levels come out high
// (measured +12.4, +11.7 and +18.3 % at 39, 86 and 99 %, 361 nodes).
// Asked: high by at most 15 % (25 % at 99 %). The plots use these levels only where the image's cells do not
// resolve the density (pairLevelsNested in package engine).
func TestPairNodesGaussian(t *testing.T) {
	const rho = 0.95
	pr := compile(t, equicorrelated(3, rho))
	res := pr.integrate(t, Settings{})
	dens, mass, err := res.PairNodes(context.Background(), 0, 2)
	if err != nil {
		t.Fatal(err)
	}
	det := 1 - rho*rho
	total, worst := 0.0, 0.0
	pairs := make([][2]float64, len(dens))
	for k := range dens {
		total += mass[k]
		pairs[k] = [2]float64{dens[k], mass[k]}
	}
	if math.Abs(total-1) > 1e-6 {
		t.Errorf("the shares sum to %.9g", total)
	}
	peak := 1 / (2 * math.Pi * math.Sqrt(det))
	for _, d := range dens {
		worst = max(worst, d)
	}
	// The densest node is near the mode: within 1 % of the peak.
	if math.Abs(worst/peak-1) > 0.01 {
		t.Errorf("densest node %.6g, peak %.6g", worst, peak)
	}
	sort.Slice(pairs, func(a, b int) bool { return pairs[a][0] > pairs[b][0] })
	for _, f := range []float64{0.39, 0.86, 0.99} {
		acc, level := 0.0, 0.0
		for _, p := range pairs {
			acc += p[1]
			if acc >= f {
				level = p[0]
				break
			}
		}
		want := (1 - f) * peak
		t.Logf("level %g: %.5g, closed form %.5g (%d nodes)", f, level, want, len(dens))
		tol := 0.15
		if f == 0.99 {
			tol = 0.25
		}
		if !(level >= want && level <= (1+tol)*want) {
			t.Errorf("level %g: %.5g, want %.5g to %g %% above", f, level, want, 100*tol)
		}
	}
}
