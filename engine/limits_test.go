package engine

import (
	"context"
	"errors"
	"fmt"
	"strings"
	"testing"
	"time"

	"bellcheck/engine/grid"
	"bellcheck/engine/model"
)

// The limits of the engine: the grid points per parameter are capped so
// that the largest analyses stay within memory, and every analysis, the
// largest too, can be cancelled at any stage.

// largest are the largest analyses the options accept, one per dimension:
// a normal density on the largest grid.
var largest = []struct {
	src    string
	points int
}{
	{"param a\n-a^2/2", 200001},
	{"param a\nparam b\n-(a^2 + b^2)/2 - a*b/2", 1501},
	{"param a\nparam b\nparam c\n-(a^2 + b^2 + c^2)/2 - a*b/2", 203},
	{"param a\nparam b\nparam c\nparam d\n-(a^2 + b^2 + c^2 + d^2)/2 - a*b/2", 53},
}

func largestOptions(d, points int) Options {
	o := Options{Plots: true}
	for k := 0; k < d; k++ {
		o.Params = append(o.Params, ParamOptions{Points: points})
	}
	return o
}

// The cap is at most what grid.MaxPoints allows, and one point more is an
// options error that names the parameter and the limit.
func TestAxisPointsCap(t *testing.T) {
	for d := 1; d <= 4; d++ {
		n := MaxAxisPoints(d)
		total := 1
		for k := 0; k < d; k++ {
			total *= n
		}
		if n%2 == 0 || total > grid.MaxPoints {
			t.Errorf("%d parameters: cap %d (even, or %d nodes over grid.MaxPoints)", d, n, total)
		}
		m, err := model.Parse(largest[d-1].src)
		if err != nil {
			t.Fatal(err)
		}
		opts := largestOptions(d, n)
		opts.Params[d-1].Points = n + 1
		_, err = Analyse(context.Background(), m, opts, nil)
		if !errors.Is(err, ErrOptions) || !strings.Contains(err.Error(), fmt.Sprint(n)) {
			t.Errorf("%d parameters, %d points: err %v, want an options error naming %d", d, n+1, err, n)
		}
	}
	// The largest 1-D grid is cheap enough to run here.
	m, _ := model.Parse(largest[0].src)
	res, err := Analyse(context.Background(), m, largestOptions(1, MaxAxisPoints(1)), nil)
	if err != nil || res.Grid.Points[0] != MaxAxisPoints(1) {
		t.Fatalf("largest 1-D grid: %v", err)
	}
}

// progressGaps runs an analysis and returns, per stage, the longest time
// between two progress reports (the page cancels from inside the
// callback, so this is the work that a cancel may have to wait for), and
// the total time.
func progressGaps(m *model.Model, opts Options) (map[string]time.Duration, time.Duration, error) {
	gaps := map[string]time.Duration{}
	start := time.Now()
	last, stage := start, "start"
	_, err := Analyse(context.Background(), m, opts, func(p Progress) {
		// A gap belongs to the stage that was running: the one of the
		// report before it (the final report has no stage).
		now := time.Now()
		if g := now.Sub(last); g > gaps[stage] {
			gaps[stage] = g
		}
		last, stage = now, p.Stage
	})
	return gaps, time.Since(start), err
}

// Cancelling the largest analyses from inside the progress callback, at
// the first report of each stage and midway through the grid, returns the
// context's error promptly. The bound here is loose (the machine is
// shared); BenchmarkLargestGaps measures the gaps between reports.
func TestCancelLargest(t *testing.T) {
	if testing.Short() {
		t.Skip("the largest grids take seconds")
	}
	for d := 2; d <= 4; d += 2 {
		m, err := model.Parse(largest[d-1].src)
		if err != nil {
			t.Fatal(err)
		}
		opts := largestOptions(d, largest[d-1].points)
		for _, stop := range []struct {
			stage    string
			fraction float64
		}{{"box", 0}, {"grid", 0.25}, {"modes", 0}, {"reverse_kl", 0}, {"compare", 0}, {"plots", 0}} {
			ctx, cancel := context.WithCancel(context.Background())
			var at time.Time
			res, err := Analyse(ctx, m, opts, func(p Progress) {
				if at.IsZero() && p.Stage == stop.stage && p.Fraction >= stop.fraction {
					at = time.Now()
					cancel()
				}
			})
			end := time.Now()
			cancel()
			if at.IsZero() {
				t.Errorf("%d-D: no progress report in stage %s", d, stop.stage)
				continue
			}
			if !errors.Is(err, context.Canceled) || res != nil {
				t.Errorf("%d-D, cancelled in %s: err %v", d, stop.stage, err)
			}
			if lat := end.Sub(at); lat > 500*time.Millisecond {
				t.Errorf("%d-D, cancelled in %s: returned %v later", d, stop.stage, lat)
			}
		}
	}
}

// BenchmarkLargestGaps reports, for the largest analysis of each
// dimension, the longest gap between progress reports in any stage (the
// latency of a cancel from the page).
func BenchmarkLargestGaps(b *testing.B) {
	for d := 1; d <= 4; d++ {
		b.Run(fmt.Sprintf("%dD", d), func(b *testing.B) {
			m, err := model.Parse(largest[d-1].src)
			if err != nil {
				b.Fatal(err)
			}
			opts := largestOptions(d, largest[d-1].points)
			worst, worstStage := time.Duration(0), ""
			for i := 0; i < b.N; i++ {
				gaps, _, err := progressGaps(m, opts)
				if err != nil {
					b.Fatal(err)
				}
				for s, g := range gaps {
					if g > worst {
						worst, worstStage = g, s
					}
				}
			}
			b.ReportMetric(float64(worst)/float64(time.Millisecond), "gap_ms")
			b.Logf("%d-D: longest gap %v in stage %s", d, worst, worstStage)
		})
	}
}
