//go:build !(js && wasm)

package main

import (
	"context"
	"fmt"
	"io"
	"strings"
	"time"

	"bellcheck/engine"
	"bellcheck/engine/model"
)

// sweepForecast forecasts a sweep's time: one analysis's forecast
// (engine.EstimateWork, at the sweep's first value) times the number of
// values. With a bound maxTime (0 for none) that the forecast exceeds, it
// says so with the cheaper plans and returns exitModel, as fit does.
func sweepForecast(ctx context.Context, file string, m *model.Model, opts engine.Options, name string, values []float64, maxTime time.Duration, stderr io.Writer) (engine.Estimate, int) {
	first, err := model.WithConstant(m, name, values[0])
	if err != nil {
		fmt.Fprintf(stderr, "bellcheck sweep: %s = %s: %v\n", name, num(values[0]), err)
		return engine.Estimate{}, exitModel
	}
	one, err := engine.EstimateWork(ctx, first, opts)
	if err != nil {
		fmt.Fprintf(stderr, "bellcheck sweep: %s: %v\n", file, err)
		return engine.Estimate{}, exitModel
	}
	n := len(values)
	all := engine.Estimate{Dim: one.Dim, Points: one.Points * n, PerPoint: one.PerPoint, PerDeriv: one.PerDeriv, Total: one.Total * time.Duration(n)}
	if maxTime > 0 && all.Total > maxTime {
		fmt.Fprint(stderr, sweepTooLong(file, n, one, maxTime))
		return all, exitModel
	}
	return all, exitOK
}

// sweepTooLong says that a sweep of n values, each analysis forecast as
// one, would take longer than allowed, and offers the cheaper plans: more
// time, fewer values, or a coarser grid.
func sweepTooLong(file string, n int, one engine.Estimate, maxTime time.Duration) string {
	var b strings.Builder
	total := one.Total * time.Duration(n)
	fmt.Fprintf(&b, "bellcheck sweep: %s: the sweep would take about %v (%d analyses, each %v), more than --max-time %v.\n",
		file, total.Round(time.Second), n, one, maxTime)
	fmt.Fprintf(&b, "  Allow it with --max-time %v", (total*3/2).Truncate(time.Minute)+time.Minute)
	if k := int(maxTime / max(one.Total, 1)); k >= 2 {
		fmt.Fprintf(&b, ", use fewer values: --steps %d", k)
	}
	if p := one.PointsWithin(maxTime / time.Duration(n)); p > 0 {
		fmt.Fprintf(&b, ", or use a coarser grid that fits: --points %d", p)
	} else {
		b.WriteString(" (no grid of this model is coarse enough for every value within the bound)")
	}
	b.WriteString(".\n")
	return b.String()
}

// sweepProgress turns the i-th of n analyses' progress into the sweep's,
// for report (nil for none): its fraction of the whole sweep and the value
// it is at.
func sweepProgress(report engine.ProgressFunc, i, n int, name string, val float64) engine.ProgressFunc {
	if report == nil {
		return nil
	}
	return func(p engine.Progress) {
		report(engine.Progress{Fraction: (float64(i) + p.Fraction) / float64(n), Stage: name + " = " + num(val) + ": " + p.Stage})
	}
}
