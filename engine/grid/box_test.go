package grid

import (
	"math"
	"testing"

	"bellcheck/engine/internal/targettest"
)

func unbounded(d int) Box {
	b := Box{}
	for i := 0; i < d; i++ {
		b.Lo = append(b.Lo, math.Inf(-1))
		b.Hi = append(b.Hi, math.Inf(1))
	}
	return b
}

// FindBox must find the mass wherever it is and at whatever scale, and leave
// a negligible share at the free faces of the fine grid.
func TestFindBoxGaussians(t *testing.T) {
	cases := []struct {
		name     string
		mean, sd []float64
	}{
		{"standard", []float64{0}, []float64{1}},
		{"far and narrow", []float64{1e4}, []float64{1e-2}},
		{"wide", []float64{-300}, []float64{1000}},
		{"2-D mixed scales", []float64{5, -0.001}, []float64{0.1, 1e-4}},
		{"3-D", []float64{1, 2, 3}, []float64{1, 2, 3}},
		{"4-D", []float64{0, 10, -10, 0}, []float64{1, 1, 0.5, 3}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			d := len(c.mean)
			cov := make([][]float64, d)
			for i := range cov {
				cov[i] = make([]float64, d)
				cov[i][i] = c.sd[i] * c.sd[i]
			}
			p := gaussian(c.mean, cov, 0)
			res, err := FindBox(ctx, p, BoxSettings{Bounds: unbounded(d)})
			if err != nil {
				t.Fatal(err)
			}
			if !res.Converged {
				t.Errorf("not converged after %d iterations", res.Iterations)
			}
			for k := 0; k < d; k++ {
				lo := (res.Box.Lo[k] - c.mean[k]) / c.sd[k]
				hi := (res.Box.Hi[k] - c.mean[k]) / c.sd[k]
				// At 1e-10 per layer the faces sit at roughly 6 to 7 sd
				// (normal tail: common practice, checked here loosely).
				if lo > -5.5 || lo < -12 || hi < 5.5 || hi > 12 {
					t.Errorf("axis %d: box at [%.3g, %.3g] sd", k, lo, hi)
				}
				if res.Capped[k][0] || res.Capped[k][1] {
					t.Errorf("axis %d capped", k)
				}
			}
			g, err := Evaluate(ctx, p, res.Box, Settings{})
			if err != nil {
				t.Fatal(err)
			}
			for k := 0; k < d; k++ {
				if e := g.Stats.EdgeMass[k]; e[0] > 1e-9 || e[1] > 1e-9 {
					t.Errorf("axis %d: fine-grid edge mass %v", k, e)
				}
			}
			t.Logf("%d iterations, %d evaluations, box %v %v", res.Iterations, res.Evaluations, res.Box.Lo, res.Box.Hi)
		})
	}
}

func TestFindBoxBoundsAndTails(t *testing.T) {
	inf := math.Inf(1)
	// Gamma(3, 1) kernel on [0, inf]: the lower face stays at the bound.
	gamma := &targettest.Func{D: 1, LogP: func(x []float64) float64 {
		if x[0] < 0 {
			return math.Inf(-1)
		}
		return 2*math.Log(x[0]) - x[0]
	}}
	res, err := FindBox(ctx, gamma, BoxSettings{Bounds: Box{Lo: []float64{0}, Hi: []float64{inf}}})
	if err != nil {
		t.Fatal(err)
	}
	if res.Box.Lo[0] != 0 || !res.Fixed[0][0] || res.Fixed[0][1] || res.Box.Hi[0] < 20 {
		t.Errorf("gamma box %v %v, fixed %v", res.Box.Lo, res.Box.Hi, res.Fixed)
	}
	// A density zero on the first boxes explored: mass only beyond 50.
	shifted := &targettest.Func{D: 1, LogP: func(x []float64) float64 {
		if x[0] < 50 {
			return math.Inf(-1)
		}
		return -(x[0] - 51) * (x[0] - 51)
	}}
	res, err = FindBox(ctx, shifted, BoxSettings{Bounds: unbounded(1)})
	if err != nil {
		t.Fatal(err)
	}
	if res.Box.Lo[0] > 50.01 || res.Box.Lo[0] < 45 || res.Box.Hi[0] < 55 || res.Box.Hi[0] > 60 {
		t.Errorf("shifted box %v %v", res.Box.Lo, res.Box.Hi)
	}
	// Cauchy: the widening stops at the cap with mass left at both faces.
	cauchy := &targettest.Func{D: 1, LogP: func(x []float64) float64 { return -math.Log1p(x[0] * x[0]) }}
	res, err = FindBox(ctx, cauchy, BoxSettings{Bounds: unbounded(1)})
	if err != nil {
		t.Fatal(err)
	}
	if !res.Capped[0][0] || !res.Capped[0][1] {
		t.Errorf("cauchy not capped: box %v %v", res.Box.Lo, res.Box.Hi)
	}
	// Flat on the whole line: improper, capped.
	flat := &targettest.Func{D: 2, LogP: func(x []float64) float64 { return -x[1] * x[1] }}
	res, err = FindBox(ctx, flat, BoxSettings{Bounds: unbounded(2)})
	if err != nil {
		t.Fatal(err)
	}
	if !res.Capped[0][0] || !res.Capped[0][1] || res.Capped[1][0] || res.Capped[1][1] {
		t.Errorf("flat axis: capped %v, box %v %v", res.Capped, res.Box.Lo, res.Box.Hi)
	}
	// A tail that falls too slowly (e^(z/50)) within a reach of [-30, inf]:
	// the face stops at the reach, with mass at it, and is capped.
	slow := &targettest.Func{D: 1, LogP: func(x []float64) float64 { return x[0]/50 - x[0]*x[0]/2*float64(btoi(x[0] > 0)) }}
	res, err = FindBox(ctx, slow, BoxSettings{Bounds: unbounded(1), Reach: Box{Lo: []float64{-30}, Hi: []float64{inf}}})
	if err != nil {
		t.Fatal(err)
	}
	if res.Box.Lo[0] < -30 || !res.Capped[0][0] || res.Capped[0][1] {
		t.Errorf("slow tail with a reach: box %v %v, capped %v", res.Box.Lo, res.Box.Hi, res.Capped)
	}
	// Zero everywhere.
	none := &targettest.Func{D: 1, LogP: func(x []float64) float64 { return math.Inf(-1) }}
	if _, err := FindBox(ctx, none, BoxSettings{Bounds: unbounded(1)}); err == nil {
		t.Error("no mass: no error")
	}
	// A pinned face stays where the user put it.
	res, err = FindBox(ctx, gaussian([]float64{0}, [][]float64{{1}}, 0), BoxSettings{
		Bounds: Box{Lo: []float64{-1}, Hi: []float64{inf}}, Pinned: [][2]bool{{true, false}}})
	if err != nil {
		t.Fatal(err)
	}
	if res.Box.Lo[0] != -1 || !res.Fixed[0][0] {
		t.Errorf("pinned face moved: %v", res.Box.Lo)
	}
}

// A two-component mixture 0.3 N(-4, 1) + 0.7 N(3, 0.5^2): two peaks whose
// basin masses are the weights (the components overlap by less than 1e-6
// at the saddle: a closed-form normal tail bound).
func TestPeaksOfMixture(t *testing.T) {
	a := gaussian([]float64{-4}, [][]float64{{1}}, math.Log(0.3))
	b := gaussian([]float64{3}, [][]float64{{0.25}}, math.Log(0.7))
	p := &targettest.Func{D: 1, LogP: func(x []float64) float64 {
		u, v := a.LogP(x), b.LogP(x)
		m := math.Max(u, v)
		return m + math.Log(math.Exp(u-m)+math.Exp(v-m))
	}}
	g, err := Evaluate(ctx, p, Box{Lo: []float64{-12}, Hi: []float64{8}}, Settings{})
	if err != nil {
		t.Fatal(err)
	}
	peaks, err := g.Peaks(ctx, nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(peaks) != 2 {
		t.Fatalf("%d peaks: %+v", len(peaks), peaks)
	}
	if !close(peaks[0].Mass, 0.7, 1e-5) || !close(peaks[0].Point[0], 3, 0.01) ||
		!close(peaks[1].Mass, 0.3, 1e-5) || !close(peaks[1].Point[0], -4, 0.01) {
		t.Errorf("peaks %+v", peaks)
	}
	// 2-D: a strongly correlated Gaussian has one peak despite its ridge.
	g2, err := Evaluate(ctx, gaussian([]float64{0, 0}, [][]float64{{1, 0.99}, {0.99, 1}}, 0),
		Box{Lo: []float64{-7, -7}, Hi: []float64{7, 7}}, Settings{})
	if err != nil {
		t.Fatal(err)
	}
	if pk, _ := g2.Peaks(ctx, nil); len(pk) != 1 || !close(pk[0].Mass, 1, 1e-9) {
		t.Errorf("correlated Gaussian: %d peaks, first mass %g", len(pk), pk[0].Mass)
	}
}

// For a standard bivariate normal the superlevel set of mass f is the disc
// of radius r with 1 - exp(-r^2/2) = f, at density level (1 - f)/(2 pi)
// (closed form: the squared radius is chi-square with 2 degrees of freedom).
func TestLevelsOfBivariateNormal(t *testing.T) {
	g, err := Evaluate(ctx, gaussian([]float64{0, 0}, [][]float64{{1, 0}, {0, 1}}, 0),
		Box{Lo: []float64{-7, -7}, Hi: []float64{7, 7}}, Settings{})
	if err != nil {
		t.Fatal(err)
	}
	pr := g.Stats.PairMarginals()[0]
	fr := []float64{0.39, 0.86, 0.99}
	lv := Levels(pr.Density, pr.Mass, fr)
	for i, f := range fr {
		want := (1 - f) / (2 * math.Pi)
		// The discrete superlevel set is off by about one ring of cells.
		if math.Abs(lv[i]/want-1) > 0.01 {
			t.Errorf("level for %g: %g, want %g", f, lv[i], want)
		}
	}
}

func btoi(b bool) int {
	if b {
		return 1
	}
	return 0
}
