package engine

import (
	"context"
	"errors"
	"math"
	"slices"
	"testing"

	"bellcheck/engine/eval"
	"bellcheck/engine/grid"
	"bellcheck/engine/model"
)

// dx/dt = x^2 from x(0) = x0 has the solution x(t) = x0/(1 - x0 t), which
// blows up at t = 1/x0 (separation of variables). Over output times up to
// t = 10 every x0 above 0.1 leaves the trajectory undefined before the last
// observation, so the density must be zero there: log p = -inf from every
// evaluator (never NaN, never a finite number from an overflowed state), and
// the analysis must keep all the mass below x0 = 0.1.
const blowUpODE = `t = [1, 2, 5, 10]
ode t from 0 substeps 400
  x = x0 rate x^2
end
param x0 in [-5, 5]
-x0^2/2 + sum(ld_normal([0.2, 0.3, 0.4, 2], x, 0.5))`

// blowUpLogP is the same density from the closed-form solution: -inf
// where the solution blows up before t = 10.
func blowUpLogP(x0 float64) float64 {
	if x0 >= 0.1 {
		return math.Inf(-1)
	}
	lp := -x0 * x0 / 2
	for i, t := range []float64{1, 2, 5, 10} {
		x := x0 / (1 - x0*t)
		z := ([]float64{0.2, 0.3, 0.4, 2}[i] - x) / 0.5
		lp += -z*z/2 - math.Log(0.5) - math.Log(2*math.Pi)/2
	}
	return lp
}

func TestODEBlowUpDensity(t *testing.T) {
	m, err := model.Parse(blowUpODE)
	if err != nil {
		t.Fatal(err)
	}
	ev, err := eval.Compile(m)
	if err != nil {
		t.Fatal(err)
	}
	// Beyond the blow-up: -inf from the point, block and derivative
	// evaluators alike, up to values that overflow in the first substep.
	beyond := []float64{0.101, 0.11, 0.2, 0.5, 1, 3, 5, 1e10, 1e200, math.MaxFloat64}
	out := make([]float64, len(beyond))
	ev.LogDensityBlock([][]float64{beyond}, out)
	for i, x0 := range beyond {
		g, h := make([]float64, 1), make([]float64, 1)
		for name, v := range map[string]float64{
			"point": ev.LogDensity([]float64{x0}),
			"block": out[i],
			"jets":  ev.LogDensityDerivs([]float64{x0}, g, h),
		} {
			// A blown-up state may also leave a finite log p too small
			// to matter (below -1e10): the density is zero in double
			// precision either way.
			if !(v < -1e10) {
				t.Errorf("%s evaluator at x0 = %g (blow-up at t = %g < 10): log p = %v, want -inf", name, x0, 1/x0, v)
			}
		}
	}
	// Before the blow-up the Runge-Kutta steps follow the closed form
	// (RK4 with 400 substeps per interval; tolerance common practice).
	for _, x0 := range []float64{-2, -0.5, 0, 0.05, 0.09} {
		got, want := ev.LogDensity([]float64{x0}), blowUpLogP(x0)
		if math.Abs(got-want) > 1e-6*math.Max(1, math.Abs(want)) {
			t.Errorf("log p at x0 = %g: %v, closed form %v", x0, got, want)
		}
	}
}

func TestODEBlowUpAnalysis(t *testing.T) {
	m, err := model.Parse(blowUpODE)
	if err != nil {
		t.Fatal(err)
	}
	res, err := Analyse(context.Background(), m, Options{Params: []ParamOptions{{Points: 20001}}}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if bad := honesty(res, 1); len(bad) > 0 {
		t.Fatalf("misleading result:\n%v\n%s", bad, diagLines(res))
	}
	// log Z and the mean from the closed form by a trapezoid sum on a
	// fine grid over [-5, 0.1) (an independent quadrature of the exact
	// solution; the density is zero from 0.1 on).
	const n = 2_000_000
	lo, hi := -5.0, 0.1
	h := (hi - lo) / n
	lps := make([]float64, n)
	for i := range lps {
		lps[i] = blowUpLogP(lo + (float64(i)+0.5)*h)
	}
	peak := slices.Max(lps)
	var z, zx float64
	for i, lp := range lps {
		w := math.Exp(lp - peak)
		z += w
		zx += w * (lo + (float64(i)+0.5)*h)
	}
	logZ, mean := peak+math.Log(z*h), zx/z
	if got := res.Exact.LogZ; math.Abs(got-logZ) > 1e-4 {
		t.Errorf("exact log Z %v, closed form by quadrature %v\n%s", got, logZ, diagLines(res))
	}
	if got := res.Exact.Mean[0]; !(math.Abs(got-mean) < 1e-4) {
		t.Errorf("exact mean %v, closed form by quadrature %v\n%s", got, mean, diagLines(res))
	}
}

// Models whose blocks overflow over part of the parameter space: an
// unbounded x0 for the blow-up above (explicit Runge-Kutta steps also
// overflow for a very negative x0, where the exact solution does not), a
// stiff decay dx/dt = -x^3 at a coarse step (the steps oscillate and
// overflow, so log p is NaN from inf - inf: the grid leaves such points out
// and says so), and a recurrence that squares its state (x_12 overflows
// from every start: the analysis fails, saying the density is zero
// everywhere). Each must end in an honest result (every absent number with its reason) or a clear error,
// never a NaN presented as a number.
func TestBlockOverflowHonest(t *testing.T) {
	for _, tc := range []struct {
		name, src string
		want      string // a diagnostic the result must carry, or ""
		noMass    bool   // the analysis must fail with grid.ErrNoBox
	}{
		{"blow-up unbounded", `t = [1, 2, 5, 10]
ode t from 0 substeps 20
  x = x0 rate x^2
end
-x0^2/2 + sum(ld_normal([0.2, 0.3, 0.4, 2], x, 0.5))`, "", false},
		{"stiff coarse", `t = [1, 2, 5, 10]
ode t from 0 substeps 2
  x = x0 rate -x^3
  y = x0 rate -2*x^3
end
cost x0^2/2 + sum((x - y)^2)`, CodeNonFinite, false},
		{"squaring recurrence", `repeat 12
  x = x0 then x^2 + 1
end
-x0^2/2 - sum((x - 2)^2)/1e6`, "", true},
	} {
		m, err := model.Parse(tc.src)
		if err != nil {
			t.Fatalf("%s: %v", tc.name, err)
		}
		res, err := Analyse(context.Background(), m, Options{}, nil)
		if tc.noMass {
			if !errors.Is(err, grid.ErrNoBox) {
				t.Errorf("%s: error %v, want grid.ErrNoBox", tc.name, err)
			}
			continue
		}
		if err != nil {
			t.Errorf("%s: %v", tc.name, err)
			continue
		}
		if bad := honesty(res, len(m.Params)); len(bad) > 0 {
			t.Errorf("%s: misleading result:\n  %v\n%s", tc.name, bad, diagLines(res))
		}
		if tc.want != "" && !slices.ContainsFunc(res.Diagnostics, func(d Diagnostic) bool { return d.Code == tc.want }) {
			t.Errorf("%s: no %s diagnostic:\n%s", tc.name, tc.want, diagLines(res))
		}
	}
}
