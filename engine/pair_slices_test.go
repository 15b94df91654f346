package engine

import (
	"context"
	"math"
	"os"
	"path/filepath"
	"testing"

	"bellcheck/engine/model"
)

// pairColumn returns the index of the image's column nearest x, and the
// column's densities.
func pairColumn(p Marginal2D, x float64) (int, []float64) {
	k := 0
	for i, v := range p.X {
		if math.Abs(v-x) < math.Abs(p.X[k]-x) {
			k = i
		}
	}
	col := make([]float64, len(p.Y))
	for b := range p.Y {
		col[b] = p.Density[b*len(p.X)+k]
	}
	return k, col
}

// The pair (x0, y0) of the short Lorenz-63 cost (testdata/reference/bench):
// its slices over z0 are multimodal, and the image's column through x0 =
// 0 against the trapezoid rule over z0 on its whole support (4,000
// intervals) at each of its points. Slices started from the centre the
// last slice in the column found wandered into another mode and gave
// 1e-8 where the density is 0.0105 (0.55 of the peak); each now starts
// from the main rule's conditional unless that centre is within two of
// its sds (usableGuess).
func TestPairSlicesOfAMultimodalCost(t *testing.T) {
	src, err := os.ReadFile(filepath.Join("..", "testdata", "reference", "bench", "lorenz_short_3d.txt"))
	if err != nil {
		t.Fatal(err)
	}
	m, err := model.Parse(string(src))
	if err != nil {
		t.Fatal(err)
	}
	a := &analysis{ctx: context.Background(), m: m, opts: Options{Plots: true}, tr: newTracker(nil), scout: true}
	res, err := a.run()
	if err != nil {
		t.Fatal(err)
	}
	p := res.Plots.Pairs[0]
	if p.I != 0 || p.J != 1 {
		t.Fatalf("first pair is (%d, %d)", p.I, p.J)
	}
	k, col := pairColumn(p, 0)
	peak := 0.0
	for _, v := range p.Density {
		peak = max(peak, v)
	}
	const n = 4000
	lo, hi := 5.0, 21.0 // z0's support
	h := (hi - lo) / n
	x := make([]float64, 3)
	worst := 0.0
	for b, y := range p.Y {
		x[0], x[1] = p.X[k], y
		s := 0.0
		for q := 0; q <= n; q++ {
			x[2] = lo + float64(q)*h
			w := 1.0
			if q == 0 || q == n {
				w = 0.5
			}
			if lp := a.ev.LogDensity(x); !math.IsNaN(lp) {
				s += w * math.Exp(lp-res.Exact.LogZ)
			}
		}
		worst = max(worst, math.Abs(col[b]-s*h))
	}
	t.Logf("column x0 = %.3f: worst %.2g of the peak %.3g", p.X[k], worst/peak, peak)
	if !(worst <= 5e-3*peak) {
		t.Errorf("column x0 = %.3f: off by %.2g of the peak %.3g", p.X[k], worst/peak, peak)
	}
}

// siteCountsModel: counts at two sites, log rates a + e1 and a + e2, the
// site effects normal with a common sd s under a half-normal prior. The
// density has no mode on the unconstrained scale (s -> 0 with the effects
// at 0).
const siteCountsModel = `k = [4, 11]
param a
param s in [0, inf]
param e1
param e2
ld_normal(a, 0, 3) + ld_normal(s, 0, 1) + ld_normal(e1, 0, s) + ld_normal(e2, 0, s) + ld_poisson(k[1], exp(a + e1)) + ld_poisson(k[2], exp(a + e2))
`

// siteCountsPair returns the pair density of (a, e2) of siteCountsModel:
// N(a; 0, 3) Pois(11; e^(a + e2)) times the integral over s of 2 phi(s)
// N(e2; 0, s) g(a, s), where g(a, s) = E_z[Pois(4; e^(a + s z))] over a
// standard normal z (the effect e1 = s z integrated out), divided by the
// normaliser, the same with g for both counts integrated over a. Each
// integral is a trapezoid rule: z over [-8, 8] at 0.05, log s over [-12,
// 1.6] at 0.05 (s beyond 5 carries a half-normal share below 1e-6), a
// over [-10, 10] at 0.2 (the integrands are smooth and decay fast: the
// rule converges geometrically).
func siteCountsPair() func(a, e2 float64) float64 {
	phi := func(z float64) float64 { return math.Exp(-z*z/2) / math.Sqrt(2*math.Pi) }
	// Pois(k; e^eta) = exp(k eta - e^eta - log k!).
	pois := func(k, eta float64) float64 {
		lg, _ := math.Lgamma(k + 1)
		return math.Exp(k*eta - math.Exp(eta) - lg)
	}
	const hz, hu = 0.05, 0.05
	var zs, wz []float64
	for z := -8.0; z <= 8; z += hz {
		zs, wz = append(zs, z), append(wz, phi(z)*hz)
	}
	g := func(a, s, k float64) float64 {
		t := 0.0
		for i, z := range zs {
			t += wz[i] * pois(k, a+s*z)
		}
		return t
	}
	var ss []float64
	for u := -12.0; u <= 1.6; u += hu {
		ss = append(ss, math.Exp(u))
	}
	Z := 0.0
	const ha = 0.2
	for a := -10.0; a <= 10; a += ha {
		inner := 0.0
		for _, s := range ss {
			inner += 2 * phi(s) * s * g(a, s, 4) * g(a, s, 11)
		}
		Z += phi(a/3) / 3 * inner * hu
	}
	Z *= ha
	return func(a, e2 float64) float64 {
		inner := 0.0
		for _, s := range ss {
			inner += 2 * phi(s) * phi(e2/s) * g(a, s, 4) // N(e2; 0, s) ds = phi(e2/s)/s * s du
		}
		return phi(a/3) / 3 * pois(11, a+e2) * inner * hu / Z
	}
}

// The pair (a, e2) of siteCountsModel, on the image's column through a =
// 0.5, against siteCountsPair where it is above the 99 % contour's level.
// Slices started from the centres their neighbours found (down the
// funnel's neck: the density has no mode) left it at 0 in places where it
// is 0.05 (above the 86 % contour), and at 17 points a side (the
// correlation's spacing) its image was up to 50 % off near the 99 %
// contour, which was jagged: now each slice starts from the conditional
// (usableGuess), and the pairs of a density with no mode are sampled at
// half the spacing (condSpacingNoMode).
func TestPairOfSiteEffects(t *testing.T) {
	res := analyseSource(t, siteCountsModel, Options{Plots: true})
	var p Marginal2D
	for _, q := range res.Plots.Pairs {
		if q.I == 0 && q.J == 3 {
			p = q
		}
	}
	if p.Density == nil {
		t.Fatal("no pair (a, e2)")
	}
	want := siteCountsPair()
	peak := 0.0
	for _, v := range p.Density {
		peak = max(peak, v)
	}
	k, col := pairColumn(p, 0.5)
	worst, checked := 0.0, 0
	for b, y := range p.Y {
		w := want(p.X[k], y)
		if w < p.Levels[2] || math.Abs(y) < 0.2 {
			continue // below the 99 % contour, or next to e2 = 0 (a logarithmic ridge)
		}
		checked++
		worst = max(worst, math.Abs(col[b]-w)/w)
	}
	t.Logf("column a = %.3f: %d points above the 99 %% level, worst relative error %.2g", p.X[k], checked, worst)
	if checked < 10 || !(worst <= 0.05) {
		t.Errorf("column a = %.3f: %d points above the 99 %% level, off by up to %.2g", p.X[k], checked, worst)
	}
}

// The regression with unknown noise and the prior 1/s (the reference
// case testdata/reference/regression.txt): the pair (a, s) in closed form
// up to its normaliser, the slope integrated out: p(a, s) ∝ s^-n
// exp(-S(a)/(2 s^2)) with S(a) the residual sum of squares minimised over
// the slope (Gelman et al., Bayesian Data Analysis, 3rd ed., section 14.2,
// with b's normal integral done by hand); normalised by the trapezoid rule
// in (a, log s). The image at every point: its interpolation between the
// slices had the pair off by 0.18 of its peak where s's density rises
// steeply from 0; the cells whose checked slices disagree with it are now
// computed (checkRoughCells), and it is off by 0.046 (the slices at the
// samples by 1.9e-4: what is left is the interpolation's error in cells
// whose checks agreed, and where the logarithm is interpolated).
func TestRegressionPairImage(t *testing.T) {
	src, err := os.ReadFile(filepath.Join("..", "testdata", "reference", "regression.txt"))
	if err != nil {
		t.Fatal(err)
	}
	res := analyseSource(t, string(src), Options{Plots: true})
	ts := []float64{0, 1, 2, 3, 4, 5}
	ys := []float64{1.2, 1.9, 3.4, 3.6, 5.1, 5.5}
	n := float64(len(ts))
	st2 := 0.0
	for _, v := range ts {
		st2 += v * v
	}
	logp := func(a, s float64) float64 {
		syy, sty := 0.0, 0.0
		for i, v := range ts {
			r := ys[i] - a
			syy += r * r
			sty += v * r
		}
		return -n*math.Log(s) - (syy-sty*sty/st2)/(2*s*s)
	}
	// The normaliser: a over [-10, 12] at 0.01, u = log s over [-6, 4] at 0.01.
	Z := 0.0
	for a := -10.0; a <= 12; a += 0.01 {
		for u := -6.0; u <= 4; u += 0.01 {
			Z += math.Exp(logp(a, math.Exp(u)) + u)
		}
	}
	Z *= 0.01 * 0.01
	var p Marginal2D
	for _, q := range res.Plots.Pairs {
		if q.I == 0 && q.J == 2 {
			p = q
		}
	}
	peak, worst := 0.0, 0.0
	for b, s := range p.Y {
		for a, x := range p.X {
			want := math.Exp(logp(x, s)) / Z
			peak = max(peak, want)
			worst = max(worst, math.Abs(p.Density[b*len(p.X)+a]-want))
		}
	}
	t.Logf("%d x %d image off by %.2g of its peak", len(p.X), len(p.Y), worst/peak)
	if !(worst <= 0.06*peak) {
		t.Errorf("%d x %d image off by %.2g of its peak", len(p.X), len(p.Y), worst/peak)
	}
}
