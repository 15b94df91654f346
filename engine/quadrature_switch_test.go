package engine

import (
	"context"
	"math"
	"os"
	"testing"

	"bellcheck/engine/fit"
	"bellcheck/engine/model"
	"bellcheck/engine/transform"
)

// TestMain lets BELLCHECK_QUADRATURE=0 run the package's tests with the
// nested rule switched off (the grid alone; the catalogue's expectations
// are the rule's, so some cases then disagree).
func TestMain(m *testing.M) {
	if os.Getenv("BELLCHECK_QUADRATURE") == "0" {
		useQuadrature = false
	}
	os.Exit(m.Run())
}

// TestWideStarts: given only the lower of two modes (a search that missed
// the higher one), the space-filling starts find the higher and say so.
// The mixture 0.5 N(-3, 1) + 0.5 N(3, 0.5^2) has its higher mode near 3
// (density 0.4 against 0.2 near -3).
func TestWideStarts(t *testing.T) {
	m, err := model.Parse("param x\nlogsumexp(log(0.5) + ld_normal(x, -3, 1), log(0.5) + ld_normal(x, 3, 0.5))\n")
	if err != nil {
		t.Fatal(err)
	}
	a := &analysis{ctx: context.Background(), m: m, tr: newTracker(nil)}
	if err := a.setup(); err != nil {
		t.Fatal(err)
	}
	maps := []transform.Map{{Scale: transform.Identity, Lo: math.Inf(-1), Hi: math.Inf(1)}}
	p, err := transform.Wrap(a.ev, maps)
	if err != nil {
		t.Fatal(err)
	}
	low, ok, err := a.polish(p, []float64{-2.5})
	if err != nil || !ok {
		t.Fatalf("polish: %v %v", ok, err)
	}
	found, err := a.wideStarts(p, []polished{low})
	if err != nil {
		t.Fatal(err)
	}
	high := false
	for _, f := range found {
		high = high || math.Abs(f.x[0]-3) < 0.01
	}
	if !high {
		t.Errorf("the mode near 3 was not found: %v", found)
	}
	codes := map[string]bool{}
	for _, d := range a.diag.sorted() {
		codes[d.Code] = true
	}
	if !codes[CodeStartsDisagree] {
		t.Errorf("no %s diagnostic: %v", CodeStartsDisagree, a.diag.sorted())
	}
}

// TestQuadratureImproper: with the switch on, a density whose integral
// diverges (1/sqrt(1 + x^2) decays like 1/|x|) has no log Z, and says why.
func TestQuadratureImproper(t *testing.T) {
	old := useQuadrature
	useQuadrature = true
	defer func() { useQuadrature = old }()
	res := analyseSource(t, "param x\n-0.5*log(1 + x^2)\n", Options{})
	if !math.IsNaN(res.Exact.LogZ) {
		t.Errorf("log Z = %g, want absent", res.Exact.LogZ)
	}
	found := false
	for _, d := range res.Diagnostics {
		found = found || d.Code == CodeImproper
	}
	if !found {
		t.Errorf("no improper diagnostic: %v", res.Diagnostics)
	}
}

// TestSpreadStarts: given only the lower of two modes (a search whose
// starts missed the higher one), the mode stage's space-filling starts
// find the higher, put it first with most of the mass and say so. The
// mixture 0.5 N(-3, 1) + 0.5 N(3, 0.5^2) has its higher mode near 3
// (density 0.4 against 0.2 near -3) holding half the mass; the Laplace
// estimates of the two masses are equal (p(mode) sd is the same).
func TestSpreadStarts(t *testing.T) {
	m, err := model.Parse("param x\nlogsumexp(log(0.5) + ld_normal(x, -3, 1), log(0.5) + ld_normal(x, 3, 0.5))\n")
	if err != nil {
		t.Fatal(err)
	}
	a := &analysis{ctx: context.Background(), m: m, tr: newTracker(nil)}
	if err := a.setup(); err != nil {
		t.Fatal(err)
	}
	if err := a.findReference(); err != nil {
		t.Fatal(err)
	}
	low, err := fit.FindModes(a.ctx, a.pw, [][]float64{{-2.5}}, a.modeLo, a.modeHi)
	if err != nil || len(low) != 1 {
		t.Fatalf("the lower mode: %v %v", low, err)
	}
	modes, masses, err := a.spreadStarts(low, []float64{1})
	if err != nil {
		t.Fatal(err)
	}
	if len(modes) != 2 || math.Abs(modes[1].X[0]-3) > 0.01 {
		t.Fatalf("modes %v, want the one near 3 added", modes)
	}
	// Equal Laplace masses: 0.5 each (the old mode's share scaled to leave
	// room for the new one).
	if math.Abs(masses[0]-0.5) > 0.01 || math.Abs(masses[1]-0.5) > 0.01 {
		t.Errorf("masses %v, want 0.5 and 0.5", masses)
	}
	codes := map[string]bool{}
	for _, d := range a.diag.sorted() {
		codes[d.Code] = true
	}
	if !codes[CodeStartsDisagree] {
		t.Errorf("no %s diagnostic: %v", CodeStartsDisagree, a.diag.sorted())
	}
}
