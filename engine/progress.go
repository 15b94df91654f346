package engine

import (
	"math"
	"time"

	"bellcheck/engine/target"
)

// progressInterval is the least time between two progress reports within a
// stage. The page yields to the browser's event loop from inside the
// callback, so reports must come often, but each yield costs a few
// milliseconds of wall time.
const progressInterval = 4 * time.Millisecond

// stageShares are the parts of the progress fraction given to each stage,
// roughly their share of the time of a typical analysis.
var stageShares = []struct {
	name  string
	share float64
}{
	{stageCompile, 0.01},
	{stageBox, 0.06},
	{stageGrid, 0.27},
	{stageModes, 0.06},
	{stageExact, 0.2},
	{stageLaplace, 0.01},
	{stageReverseKL, 0.12},
	{stageMeanField, 0.06},
	{stageEP, 0.03},
	{stageCompare, 0.14},
	{stagePlots, 0.04},
}

// Stage names, as in Progress.Stage and Timing.Stages.
const (
	stageCompile   = "compile"
	stageBox       = "box"
	stageGrid      = "grid"
	stageModes     = "modes"
	stageExact     = "exact"
	stageLaplace   = "laplace"
	stageReverseKL = "reverse_kl"
	stageMeanField = "mean_field"
	stageEP        = "ep"
	stageCompare   = "compare"
	stagePlots     = "plots"
)

// tracker turns per-stage fractions into a monotone overall fraction,
// throttles the reports and times the stages.
type tracker struct {
	fn         ProgressFunc
	start      time.Time
	last       time.Time
	stage      string
	stageStart time.Time
	base, span float64
	frac       float64
	stages     map[string]float64
}

func newTracker(fn ProgressFunc) *tracker {
	now := time.Now()
	return &tracker{fn: fn, start: now, last: now, stages: map[string]float64{}}
}

// enter ends the current stage and starts the named one.
func (t *tracker) enter(stage string) {
	now := time.Now()
	t.finishStage(now)
	t.stage = stage
	t.stageStart = now
	base := 0.0
	for _, s := range stageShares {
		if s.name == stage {
			t.base, t.span = base, s.share
			break
		}
		base += s.share
	}
	t.report(now)
}

func (t *tracker) finishStage(now time.Time) {
	if t.stage != "" {
		t.stages[t.stage] += float64(now.Sub(t.stageStart)) / float64(time.Millisecond)
		t.stage = ""
	}
}

// at reports that the current stage is the fraction f done.
func (t *tracker) at(f float64) {
	if f > 1 {
		f = 1
	}
	if g := t.base + t.span*f; g > t.frac {
		t.frac = g
	}
	now := time.Now()
	if now.Sub(t.last) >= progressInterval {
		t.report(now)
	}
}

// beat reports, when the last report is progressInterval old, without
// changing the fraction: a pause point inside work of no known share.
func (t *tracker) beat() {
	if now := time.Now(); now.Sub(t.last) >= progressInterval {
		t.report(now)
	}
}

// tick reports without new information on the fraction (work of unknown
// length): the fraction creeps towards the stage's end.
func (t *tracker) tick(evaluations int, expected float64) {
	t.at(1 - math.Exp(-float64(evaluations)/expected))
}

func (t *tracker) report(now time.Time) {
	t.last = now
	if t.fn != nil {
		t.fn(Progress{Stage: t.stage, Fraction: t.frac})
	}
}

// snapshot returns the timing so far, the running stage's time to now
// included, and changes nothing.
func (t *tracker) snapshot() Timing {
	now := time.Now()
	stages := make(map[string]float64, len(t.stages)+1)
	for k, v := range t.stages {
		stages[k] = v
	}
	if t.stage != "" {
		stages[t.stage] += float64(now.Sub(t.stageStart)) / float64(time.Millisecond)
	}
	return Timing{Total: float64(now.Sub(t.start)) / float64(time.Millisecond), Stages: stages}
}

// done ends the last stage, reports the fraction 1 and returns the timing.
func (t *tracker) done() Timing {
	now := time.Now()
	t.finishStage(now)
	t.frac = 1
	t.report(now)
	return Timing{Total: float64(now.Sub(t.start)) / float64(time.Millisecond), Stages: t.stages}
}

// watched wraps a density so that work inside the fits, which take no
// progress callback, still reports progress every few dozen evaluations.
type watched struct {
	target.Density
	n     int
	total int
	tick  func(total int)
}

func (w *watched) count(k int) {
	w.n += k
	w.total += k
	if w.n >= 32 {
		w.n = 0
		w.tick(w.total)
	}
}

func (w *watched) LogDensity(x []float64) float64 {
	w.count(1)
	return w.Density.LogDensity(x)
}

func (w *watched) LogDensityDerivs(x, grad, hess []float64) float64 {
	w.count(4)
	return w.Density.LogDensityDerivs(x, grad, hess)
}

func (w *watched) LogDensityBlock(cols [][]float64, out []float64) {
	w.Density.LogDensityBlock(cols, out)
	w.count(len(out))
}

func (w *watched) Clone() target.Density {
	return &watched{Density: w.Density.Clone(), tick: w.tick}
}
