package engine

import (
	"context"
	"math"
	"os"
	"strings"
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
	a := referenceStage(t, "param x\nlogsumexp(log(0.5) + ld_normal(x, -3, 1), log(0.5) + ld_normal(x, 3, 0.5))\n")
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

// coolingCost is a stepped trajectory (a cup cooling toward the room's 21
// degrees, T_k = T_{k-1} - lam (T_{k-1} - 21)) with a background term: a
// rate above 1 makes the steps overshoot the room's temperature, and the
// cost has a false minimum there (T0 = -180.7, lam = 1.19, J = 32136)
// beside the true one (J = 0.65).
const coolingCost = `seen = [78.1, 70.9, 64.2, 58.8, 53.6, 49.5, 45.7, 42.3]
param T0
param lam in [0, inf]
repeat 8 as k
  T = T0 then T - lam*(T - 21)
end
cost (T0 - 85)^2/(2*5^2) + (lam - 0.1)^2/(2*0.05^2) + sum((T - seen)^2)/(2*0.4^2)
`

// coolingMinimum minimises the cooling cost independently: for a given
// lam each T_k is 21 + (T0 - 21)(1 - lam)^k, linear in T0, so the best T0
// is a weighted least-squares solution; a golden-section search over lam
// in [0.01, 0.5] (the true basin) on that profile gives the minimum.
func coolingMinimum() (t0, lam, cost float64) {
	seen := []float64{78.1, 70.9, 64.2, 58.8, 53.6, 49.5, 45.7, 42.3}
	profile := func(l float64) (float64, float64) {
		// J(T0) = (T0-85)^2/50 + sum (21 + (T0-21) g_k - y_k)^2 / 0.32
		num, den := 85.0/50, 1.0/50
		for k, y := range seen {
			g := math.Pow(1-l, float64(k+1))
			num += g * (y - 21 + 21*g) / 0.32
			den += g * g / 0.32
		}
		t := num / den
		j := sq(t-85)/50 + sq(l-0.1)/(2*0.05*0.05)
		for k, y := range seen {
			j += sq(21+(t-21)*math.Pow(1-l, float64(k+1))-y) / 0.32
		}
		return j, t
	}
	a, b := 0.01, 0.5
	phi := (math.Sqrt(5) - 1) / 2
	for i := 0; i < 200; i++ {
		c, d := b-phi*(b-a), a+phi*(b-a)
		if jc, _ := profile(c); jc < func() float64 { jd, _ := profile(d); return jd }() {
			b = d
		} else {
			a = c
		}
	}
	lam = (a + b) / 2
	cost, t0 = profile(lam)
	return t0, lam, cost
}

// TestSpreadStartsLeaveAFalseMinimum: the mode search given only the
// cooling cost's false minimum (its grid's peak) finds the true one from
// starts spread on lam's log scale (ten sds by the curvature, 0.0025, never
// leave the false basin), puts it first, and the Laplace fit sits there:
// against coolingMinimum, an independent profile minimisation.
func TestSpreadStartsLeaveAFalseMinimum(t *testing.T) {
	wantT0, wantLam, wantJ := coolingMinimum()
	if math.Abs(wantT0-86.83) > 0.01 || math.Abs(wantLam-0.1306) > 1e-3 {
		t.Fatalf("the independent minimum (%v, %v) is not the one this test is about", wantT0, wantLam)
	}
	// The cost's minimum is a mode on the original scale: the bounded rate
	// is fitted as it is (on its default log scale the mode moves by the
	// Jacobian).
	asIs := Options{Params: []ParamOptions{{}, {Scale: Identity}}}
	coolingFromFalseMinimum(t, coolingCost, asIs, wantT0, wantLam, wantJ)
	coolingFromFalseMinimum(t, strings.Replace(coolingCost, "param lam in [0, inf]", "param lam", 1), Options{}, wantT0, wantLam, wantJ)
}

// coolingFromFalseMinimum is TestSpreadStartsLeaveAFalseMinimum on one
// form of the cooling cost (the rate bounded or not).
func coolingFromFalseMinimum(t *testing.T, src string, opts Options, wantT0, wantLam, wantJ float64) {
	t.Helper()
	a := referenceStageWith(t, src, opts)
	falseMin, err := fit.FindModes(a.ctx, a.pw, [][]float64{{-180, 1.19}}, a.modeLo, a.modeHi)
	if err != nil || len(falseMin) != 1 || math.Abs(falseMin[0].X[1]-1.1912) > 1e-3 {
		t.Fatalf("the false minimum: %v %v", falseMin, err)
	}
	modes, _, err := a.spreadStarts(falseMin, []float64{1})
	if err != nil {
		t.Fatal(err)
	}
	found := false
	for _, md := range modes {
		if math.Abs(md.X[0]-wantT0) < 1e-4*0.44 && math.Abs(md.X[1]-wantLam) < 1e-4*0.0016 {
			found = true
			if j := -md.LogDensity; math.Abs(j-wantJ) > 1e-8*(1+wantJ) {
				t.Errorf("J at the minimum %v, want %v", j, wantJ)
			}
		}
	}
	if !found {
		t.Fatalf("modes %v: the true minimum (%v, %v) not found", modes, wantT0, wantLam)
	}

	res := analyseSource(t, src, opts)
	lap := res.Fits[Laplace]
	if lap == nil || math.Abs(lap.Mean[0]-wantT0) > 1e-4*0.44 || math.Abs(lap.Mean[1]-wantLam) > 1e-4*0.0016 {
		t.Errorf("the Laplace fit at %v, want the true minimum (%v, %v)", lap, wantT0, wantLam)
	}
}

// referenceStage returns an analysis of src run up to its reference stage
// (setup, box, scouting grid).
func referenceStage(t *testing.T, src string) *analysis {
	t.Helper()
	return referenceStageWith(t, src, Options{})
}

// referenceStageWith is referenceStage under the options opts.
func referenceStageWith(t *testing.T, src string, opts Options) *analysis {
	t.Helper()
	m, err := model.Parse(src)
	if err != nil {
		t.Fatal(err)
	}
	a := &analysis{ctx: context.Background(), m: m, opts: opts, tr: newTracker(nil)}
	if err := a.setup(); err != nil {
		t.Fatal(err)
	}
	if err := a.findReference(); err != nil {
		t.Fatal(err)
	}
	return a
}
