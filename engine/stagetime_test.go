//go:build linux

package engine

import (
	"context"
	"fmt"
	"maps"
	"os"
	"path/filepath"
	"slices"
	"syscall"
	"testing"
	"time"

	"bellcheck/engine/model"
)

// stageTimeCases are the models the timing probes below run, with the
// options the page would give them.
var stageTimeCases = []struct {
	file string
	opts Options
}{
	{"decay_rate_1d.txt", Options{Plots: true, Params: []ParamOptions{logScale}}},
	{"banana_2d.txt", Options{Plots: true}},
	{"sensor_3d.txt", Options{Plots: true, Params: []ParamOptions{{}, logScale}}},
	{"counts_4d.txt", Options{Plots: true}},
	{"lorenz_short_3d.txt", Options{Plots: true, Params: lorenzAxes}},
	{"lorenz_long_3d.txt", Options{Plots: true, Params: lorenzAxes}},
}

// benchFile parses a model of testdata/reference/bench.
func benchFile(t *testing.T, file string) *model.Model {
	t.Helper()
	return parseFile(t, filepath.Join("..", "testdata", "reference", "bench", file))
}

// TestStageTimes prints each stage's time on the benchmark models (set
// BELLCHECK_STAGETIMES=1); it checks nothing.
func TestStageTimes(t *testing.T) {
	if os.Getenv("BELLCHECK_STAGETIMES") == "" {
		t.Skip("set BELLCHECK_STAGETIMES=1")
	}
	for _, c := range stageTimeCases {
		m := benchFile(t, c.file)
		for rep := 0; rep < 3; rep++ {
			c0 := cpuTime()
			res, err := Analyse(context.Background(), m, c.opts, nil)
			cpu := cpuTime() - c0
			if err != nil {
				t.Fatal(err)
			}
			s := fmt.Sprintf("%-18s cpu %7.1f ms total %7.1f ms:", c.file, cpu, res.Timing.Total)
			for _, st := range []string{stageCompile, stageBox, stageGrid, stageModes, stageExact, stageLaplace, stageReverseKL, stageMeanField, stageEP, stageCompare, stagePlots} {
				s += fmt.Sprintf(" %s %.1f", st, res.Timing.Stages[st])
			}
			t.Log(s)
		}
	}
}

// cpuTime returns the process's user and system CPU time in milliseconds.
func cpuTime() float64 {
	var ru syscall.Rusage
	syscall.Getrusage(syscall.RUSAGE_SELF, &ru)
	ms := func(t syscall.Timeval) float64 { return float64(t.Sec)*1e3 + float64(t.Usec)/1e3 }
	return ms(ru.Utime) + ms(ru.Stime)
}

// TestProgressGaps prints, per pair of stages, the longest time between
// two progress reports on the benchmark models (set BELLCHECK_STAGETIMES=1):
// the page pauses only there, so a long gap is a long task in the
// browser. It checks nothing.
func TestProgressGaps(t *testing.T) {
	if os.Getenv("BELLCHECK_STAGETIMES") == "" {
		t.Skip("set BELLCHECK_STAGETIMES=1")
	}
	for _, c := range stageTimeCases {
		m := benchFile(t, c.file)
		gaps := map[string]float64{}
		last, lastStage := time.Now(), "start"
		if _, err := Analyse(context.Background(), m, c.opts, func(p Progress) {
			now := time.Now()
			k := lastStage + " > " + p.Stage
			gaps[k] = max(gaps[k], float64(now.Sub(last))/float64(time.Millisecond))
			last, lastStage = now, p.Stage
		}); err != nil {
			t.Fatal(err)
		}
		s := c.file + ":"
		for _, k := range slices.Sorted(maps.Keys(gaps)) {
			s += fmt.Sprintf(" %s %.1f;", k, gaps[k])
		}
		t.Log(s)
	}
}
