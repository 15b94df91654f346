package engine

import (
	"context"
	"math"
	"math/rand/v2"
	"runtime"
	"testing"

	"bellcheck/engine/model"
)

// TestChaoticCostGridMissesMass runs the README's Lorenz-63 example (the
// starting state from four readings of x over two time units): its
// posterior is a set of thin ridges along a valley, finer than the grid's
// spacing, and the nested rule does not stand, so the grid gives the
// exact results, with a log Z of -6.79 and an error estimate of 0.78.
// An independent importance sampling here, from the prior with a plain
// fourth-order Runge-Kutta of the same steps (Lorenz 1963's equations),
// puts log Z near -4.53 (-4.531 +- 0.011 with 4e7 draws): the grid misses
// most of the mass, and the analysis must say so (checkMass) rather than
// report its moments as exact. Natively it takes about half a minute; it
// does not run under WebAssembly.
func TestChaoticCostGridMissesMass(t *testing.T) {
	if runtime.GOOS == "js" {
		t.Skip("half a minute natively")
	}
	src := `t = [0.5, 1, 1.5, 2]
ode t from 0 substeps 40
  x = x0 rate 10*(y - x)
  y = y0 rate x*(28 - z) - y
  z = z0 rate x*y - 8/3*z
end
x_seen = [6.1, 9.8, 2.3, -4.0]
cost sum((x - x_seen)^2)/2 + (x0^2 + y0^2 + (z0 - 20)^2)/50
`
	m, err := model.Parse(src)
	if err != nil {
		t.Fatal(err)
	}
	old := exactEarlyAfter
	exactEarlyAfter = 0
	defer func() { exactEarlyAfter = old }()
	var early []*Result
	res, err := AnalyseEarly(context.Background(), m, Options{Plots: true}, nil, func(r *Result) { early = append(early, r) })
	if err != nil {
		t.Fatal(err)
	}
	// The check runs around the Laplace fit before the exact result is
	// handed over, so no early result carries the grid's log Z.
	if len(early) == 0 {
		t.Error("no early result")
	}
	for i, r := range append(early, res) {
		if !math.IsNaN(r.Exact.LogZ) || !hasDiagnostic(r, CodeUnresolved, "around the Laplace fit") {
			t.Errorf("result %d: log Z %v, diagnostics %v", i, r.Exact.LogZ, r.Diagnostics)
		}
		// The modes' shares came from the same grid's basins: they go
		// too, in the table and in the note that counts the modes.
		for _, m := range r.Modes {
			if !math.IsNaN(m.Mass) {
				t.Errorf("result %d: a mode's mass %v is reported", i, m.Mass)
			}
		}
		if len(r.Modes) > 1 && !hasDiagnostic(r, CodeSeveralModes, "not reported") {
			t.Errorf("result %d: %d modes and no several_modes note without their shares: %v", i, len(r.Modes), r.Diagnostics)
		}
	}
	if !hasDiagnostic(res, CodeUnresolved, "missed part of the mass") {
		t.Errorf("no diagnostic that the grid missed mass; log Z %v (error %v), diagnostics %v", res.Exact.LogZ, res.Exact.LogZErr, res.Diagnostics)
	}
	if !math.IsNaN(res.Exact.LogZ) {
		t.Errorf("log Z %v is reported", res.Exact.LogZ)
	}
	// The comparisons are not reported, so no note says how they were
	// made (before, five fit_off_grid notes spoke of them).
	if hasCode(res, CodeFitOffGrid) {
		t.Errorf("a fit_off_grid note about comparisons that are not reported: %v", res.Diagnostics)
	}
	// The independent estimate: log Z = log E_prior[exp(-misfit)] +
	// (3/2) log(50 pi), the prior N((0, 0, 20), 25 I) being
	// exp(-quadratic/50) / (50 pi)^(3/2).
	rng := rand.New(rand.NewPCG(1, 2))
	const n = 400000
	sum := 0.0
	for i := 0; i < n; i++ {
		x0, y0, z0 := 5*rng.NormFloat64(), 5*rng.NormFloat64(), 20+5*rng.NormFloat64()
		sum += math.Exp(-lorenzMisfit(x0, y0, z0))
	}
	logZ := math.Log(sum/n) + 1.5*math.Log(50*math.Pi)
	t.Logf("independent log Z %.3f from %d prior draws", logZ, n)
	if logZ < -5.2 {
		t.Errorf("the independent estimate %.3f is not above the grid's -6.79 by log 3 and more", logZ)
	}
}

// lorenzMisfit is the README example's misfit, sum (x(t) - seen)^2 / 2,
// by classical Runge-Kutta with 40 steps between readings.
func lorenzMisfit(x, y, z float64) float64 {
	f := func(x, y, z float64) (float64, float64, float64) {
		return 10 * (y - x), x*(28-z) - y, x*y - 8.0/3*z
	}
	seen := []float64{6.1, 9.8, 2.3, -4.0}
	s := 0.0
	for j := range seen {
		h := 0.5 / 40
		for k := 0; k < 40; k++ {
			a1, b1, c1 := f(x, y, z)
			a2, b2, c2 := f(x+h/2*a1, y+h/2*b1, z+h/2*c1)
			a3, b3, c3 := f(x+h/2*a2, y+h/2*b2, z+h/2*c2)
			a4, b4, c4 := f(x+h*a3, y+h*b3, z+h*c3)
			x += h / 6 * (a1 + 2*a2 + 2*a3 + a4)
			y += h / 6 * (b1 + 2*b2 + 2*b3 + b4)
			z += h / 6 * (c1 + 2*c2 + 2*c3 + c4)
		}
		d := x - seen[j]
		s += d * d / 2
	}
	if math.IsNaN(s) {
		return math.Inf(1)
	}
	return s
}
