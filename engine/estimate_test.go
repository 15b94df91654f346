package engine

import (
	"context"
	"strings"
	"testing"
	"time"

	"bellcheck/engine/grid"
	"bellcheck/engine/model"
)

func TestEstimateWorkCountsTheGrid(t *testing.T) {
	m, err := model.Parse("param a\nparam s in [0, inf]\nld_normal(1.5, a, s) - s")
	if err != nil {
		t.Fatal(err)
	}
	est, err := EstimateWork(context.Background(), m, Options{Params: []ParamOptions{{Points: 100}}})
	if err != nil {
		t.Fatal(err)
	}
	// 100 points become 101 (odd), the other axis the 2-D default.
	if want := 101 * grid.DefaultPoints(2); est.Points != want {
		t.Errorf("points %d, want %d", est.Points, want)
	}
	if est.PerPoint <= 0 || est.Total < est.PerPoint*time.Duration(est.Points) {
		t.Errorf("estimate %+v: the total must cover one pass over the grid", est)
	}
	if est.Dim != 2 || est.PerDeriv <= 0 || est.Total < est.PerPoint*time.Duration(est.Points)+time.Duration(derivWork(2)*float64(est.PerDeriv)) {
		t.Errorf("estimate %+v: the total must cover the evaluations with derivatives too", est)
	}
	if _, err := EstimateWork(context.Background(), m, Options{Params: []ParamOptions{{Points: 5000}}}); err == nil {
		t.Error("options over the engine's limit gave no error")
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := EstimateWork(ctx, m, Options{}); err == nil {
		t.Error("a cancelled context gave no error")
	}
}

// TestPointsWithinIsTheLargestThatFits: the points PointsWithin returns are
// forecast within the budget and the next odd number is not (the
// definition), for costs and budgets over several orders of magnitude.
func TestPointsWithinIsTheLargestThatFits(t *testing.T) {
	for d := 1; d <= 4; d++ {
		for _, per := range []time.Duration{10 * time.Nanosecond, time.Microsecond, 100 * time.Microsecond} {
			for _, budget := range []time.Duration{100 * time.Millisecond, 10 * time.Second, 10 * time.Minute} {
				e := Estimate{Dim: d, PerPoint: per, PerDeriv: 20 * per}
				n := e.PointsWithin(budget)
				pow := func(n int) int {
					r := 1
					for range d {
						r *= n
					}
					return r
				}
				if n == 0 {
					if e.forecast(pow(grid.MinPoints)) <= budget {
						t.Errorf("d %d, %v, %v: none fits, but %d points do", d, per, budget, grid.MinPoints)
					}
					continue
				}
				if n%2 == 0 || n < grid.MinPoints || n > MaxAxisPoints(d) {
					t.Errorf("d %d: %d points", d, n)
				}
				if f := e.forecast(pow(n)); f > budget {
					t.Errorf("d %d, %v, %v: %d points forecast %v", d, per, budget, n, f)
				}
				if n+2 <= MaxAxisPoints(d) && e.forecast(pow(n+2)) <= budget {
					t.Errorf("d %d, %v, %v: %d points fit too", d, per, budget, n+2)
				}
			}
		}
	}
}

// TestEstimateStringNamesCostlyDerivatives: the forecast's words name the
// evaluations with derivatives where they are a quarter of it or more (an
// ode's, whose jets cost 35 to 70 times its value), and only there.
func TestEstimateStringNamesCostlyDerivatives(t *testing.T) {
	cheap := Estimate{Dim: 3, Points: 531441, PerPoint: 3 * time.Microsecond, PerDeriv: 10 * time.Microsecond}
	cheap.Total = cheap.forecast(cheap.Points)
	costly := cheap
	costly.PerDeriv = 230 * time.Microsecond
	costly.Total = costly.forecast(costly.Points)
	if s := cheap.String(); strings.Contains(s, "derivatives") {
		t.Errorf("cheap derivatives named: %q", s)
	}
	if s := costly.String(); !strings.Contains(s, "23000 evaluations with derivatives at 230µs each") {
		t.Errorf("costly derivatives not named: %q", s)
	}
}
