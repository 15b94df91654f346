package engine

import (
	"context"
	"fmt"
	"math"
	"time"

	"bellcheck/engine/eval"
	"bellcheck/engine/grid"
	"bellcheck/engine/model"
)

// Estimate is a forecast of an analysis's work, from a timed pilot: the
// compiled density evaluated on a small block of points spread over the
// box, and with its gradient and Hessian at a few of them.
type Estimate struct {
	// Dim is the number of parameters.
	Dim int
	// Points is the number of nodes of the analysis's grid.
	Points int
	// PerPoint is the measured time of one density evaluation.
	PerPoint time.Duration
	// PerDeriv is the measured time of one evaluation with the gradient
	// and Hessian (the mode search, the fits, the nested rule's slices).
	PerDeriv time.Duration
	// Total is the forecast time of the whole analysis.
	Total time.Duration
}

// String describes the estimate in words: "about 4 min (2.8 million grid
// points at 52 µs each)", and where the evaluations with derivatives are
// a quarter of the forecast or more, their cost too: "about 9s (531441
// grid points at 3µs each; 23000 evaluations with derivatives at 230µs
// each)".
func (e Estimate) String() string {
	s := fmt.Sprintf("about %s (%s grid points at %s each", roundDuration(e.Total), countString(e.Points), roundDuration(e.PerPoint))
	if n := derivWork(e.Dim); 4*n*float64(e.PerDeriv) >= float64(e.Total) && e.PerDeriv > 0 {
		s += fmt.Sprintf("; %s evaluations with derivatives at %s each", countString(int(n)), roundDuration(e.PerDeriv))
	}
	return s + ")"
}

// analysisPerGrid is the forecast time of a whole analysis in units of one
// evaluation of its grid: the grid holds half the time of a typical
// analysis (stageShares), and the box search's coarse grids, the modes, the
// fits and the comparison evaluate the density again.
const analysisPerGrid = 2.0

// Work of an analysis besides the density: about 120 ns per grid node and
// parameter (the grid's sums, marginals, levels and plots) and a few
// milliseconds in all (compiling, fitting), measured natively on the
// gallery's examples (cheap densities, where this work dominates). In the
// browser it is slower by a factor of two or three; long analyses are
// dominated by the density, which the pilot measures where it runs.
const (
	nodeOverhead  = 120 * time.Nanosecond
	fixedOverhead = 3 * time.Millisecond
)

// derivWork is the typical number of evaluations with gradient and Hessian
// of an analysis of d parameters: the medians over 59 models (the gallery
// and models typed as users would, measured with a counter in the
// evaluator, not kept): 539 in one parameter, 3,153 in two, 23,329 in
// three, 69,593 in four. The spread is wide (in three parameters from
// 1,893 to 374,169: a chaotic cost's reverse-KL fit), so a density whose
// derivatives are costly (an ode's, 35 to 70 times its value in three
// parameters) may still take several times its forecast.
func derivWork(d int) float64 {
	switch {
	case d <= 1:
		return 540
	case d == 2:
		return 3200
	case d == 3:
		return 23000
	}
	return 70000
}

// boxGrids is the typical work of the box search in exploration grids
// (grid.CoarsePoints per axis), whatever the fine grid's points: about 4 in
// one or two dimensions and 30 in three or four (from the box stage's time
// over the grid's in Result.Timing, on Cauchy likelihoods of 30 to 1000
// observations in 1 to 4 parameters).
func boxGrids(d int) float64 {
	if d <= 2 {
		return 4
	}
	return 30
}

// pilotAim is how long the pilot tries to run: long enough for a coarse
// clock (the browser's ticks in 0.1 ms), short against any analysis.
const pilotAim = 5 * time.Millisecond

// pilotMax bounds the points of the pilot, and pilotRepeats is the number
// of timings of its final block.
const (
	pilotMax     = 4096
	pilotRepeats = 3
)

// EstimateWork compiles m and forecasts the time of Analyse with opts: it
// times the density's LogDensityBlock on blocks of points spread over each
// parameter's box (the options' box where set, otherwise the support, or
// 10 wide from a single finite bound, or [-5, 5]), doubling the block until
// it takes pilotAim and keeping the fastest of pilotRepeats timings of the
// final block, and multiplies the time per point by the grid's nodes
// (grid.AxisPoints per parameter) and analysisPerGrid; it adds derivWork
// evaluations with derivatives, timed at the pilot's points. It returns the
// options' problems (CheckOptions) and ctx's error as errors.
func EstimateWork(ctx context.Context, m *model.Model, opts Options) (Estimate, error) {
	if m == nil || len(m.Params) == 0 {
		return Estimate{}, ErrNoModel
	}
	if problems := CheckOptions(m, opts); len(problems) > 0 {
		return Estimate{}, fmt.Errorf("%w: %v", ErrOptions, problems[0])
	}
	ev, err := eval.Compile(m)
	if err != nil {
		return Estimate{}, err
	}
	d := len(m.Params)
	points := 1
	lo, hi := make([]float64, d), make([]float64, d)
	for i, p := range m.Params {
		var po ParamOptions
		if i < len(opts.Params) {
			po = opts.Params[i]
		}
		points *= grid.AxisPoints(po.Points, d)
		lo[i], hi[i] = pilotRange(p, po)
	}
	cols := make([][]float64, d)
	for i := range cols {
		cols[i] = make([]float64, pilotMax)
	}
	out := make([]float64, pilotMax)
	// A first call sizes the evaluator's buffers: it is not timed.
	fillPilot(cols, lo, hi, 16)
	ev.LogDensityBlock(sliceCols(cols, 16), out[:16])
	per, err := timePer(ctx, 16, pilotMax, pilotAim, func(n int) time.Duration {
		fillPilot(cols, lo, hi, n) // not timed
		began := time.Now()
		ev.LogDensityBlock(sliceCols(cols, n), out[:n])
		return time.Since(began)
	})
	if err != nil {
		return Estimate{}, err
	}
	perDeriv, err := timeDerivs(ctx, ev, cols)
	if err != nil {
		return Estimate{}, err
	}
	e := Estimate{Dim: d, Points: points, PerPoint: per, PerDeriv: perDeriv}
	e.Total = e.forecast(points)
	return e, nil
}

// timeDerivs returns the time of one evaluation of ev with its gradient and
// Hessian at the pilot's points (cols): blocks of them doubled from 4 until
// one takes a quarter of pilotAim (at most derivPilotMax points), the
// fastest of pilotRepeats timings. A quarter: the term needs no finer
// measure, and the page forecasts on its own thread (an ode's pilot is
// about 4 ms natively).
func timeDerivs(ctx context.Context, ev *eval.Evaluator, cols [][]float64) (time.Duration, error) {
	d := len(cols)
	x, g, h := make([]float64, d), make([]float64, d), make([]float64, d*d)
	run := func(n int) time.Duration {
		began := time.Now()
		for i := 0; i < n; i++ {
			for k := range x {
				x[k] = cols[k][i]
			}
			ev.LogDensityDerivs(x, g, h)
		}
		return time.Since(began)
	}
	run(1) // sizes the evaluator's buffers: not timed
	return timePer(ctx, 4, derivPilotMax, pilotAim/4, run)
}

// timePer returns the time per point of run(n), which times n points:
// n doubled from first until a run takes aim (at most most points), then
// the fastest of pilotRepeats runs at that n, so that a pause of the
// process (another program, a garbage collection) does not pass for the
// density's cost. It returns ctx's error between runs.
func timePer(ctx context.Context, first, most int, aim time.Duration, run func(n int) time.Duration) (time.Duration, error) {
	n := first
	var spent time.Duration
	for {
		if err := ctx.Err(); err != nil {
			return 0, err
		}
		if spent = run(n); spent >= aim || n >= most {
			break
		}
		n = min(2*n, most)
	}
	for range pilotRepeats - 1 {
		if err := ctx.Err(); err != nil {
			return 0, err
		}
		spent = min(spent, run(n))
	}
	return time.Duration(max(1, float64(spent)/float64(n))), nil
}

// derivPilotMax bounds the points of the derivatives' pilot.
const derivPilotMax = 256

// forecast is the time of an analysis on a grid of points nodes: the
// density's evaluations on the grids (analysisPerGrid times the grid's,
// and the box search's), the work per node, and derivWork evaluations with
// derivatives.
func (e Estimate) forecast(points int) time.Duration {
	d := e.Dim
	t := float64(fixedOverhead) + boxWork(d, e.PerPoint) + derivWork(d)*float64(e.PerDeriv) +
		float64(points)*(float64(e.PerPoint)*analysisPerGrid+float64(nodeOverhead)*float64(d))
	return time.Duration(min(t, math.MaxInt64/2))
}

// boxWork is the forecast time of the box search, in nanoseconds.
func boxWork(d int, per time.Duration) float64 {
	return boxGrids(d) * math.Pow(float64(grid.CoarsePoints(d)), float64(d)) * float64(per)
}

// PointsWithin returns the most grid points per parameter (odd, at least
// grid.MinPoints, at most MaxAxisPoints(e.Dim)) for which the analysis is
// forecast to take at most budget; 0 when even the fewest points take
// longer (the box search and the evaluations with derivatives alone may:
// they do not shrink with the points).
func (e Estimate) PointsWithin(budget time.Duration) int {
	d, perPoint := e.Dim, e.PerPoint
	if d < 1 || perPoint <= 0 {
		return 0
	}
	nodes := (float64(budget-fixedOverhead) - boxWork(d, perPoint) - derivWork(d)*float64(e.PerDeriv)) / (float64(perPoint)*analysisPerGrid + float64(nodeOverhead)*float64(d))
	if nodes < 1 {
		return 0
	}
	n := int(math.Floor(math.Pow(nodes, 1/float64(d)) + 1e-9))
	n = min(n, MaxAxisPoints(d))
	if n%2 == 0 {
		n--
	}
	if n < grid.MinPoints {
		return 0
	}
	return n
}

// pilotRange is the range of a parameter the pilot samples.
func pilotRange(p model.Param, po ParamOptions) (lo, hi float64) {
	finite := func(v float64) bool { return !math.IsInf(v, 0) && !math.IsNaN(v) }
	lo, hi = p.Lo, p.Hi
	if po.Lo != nil && finite(*po.Lo) {
		lo = *po.Lo
	}
	if po.Hi != nil && finite(*po.Hi) {
		hi = *po.Hi
	}
	switch {
	case finite(lo) && finite(hi):
	case finite(lo):
		hi = lo + 10
	case finite(hi):
		lo = hi - 10
	default:
		lo, hi = -5, 5
	}
	return lo, hi
}

// fillPilot spreads n points over the box: a scrambled lattice (each axis
// steps by its own irrational fraction), cell centres inside the box.
func fillPilot(cols [][]float64, lo, hi []float64, n int) {
	// Additive recurrences with the square roots of the first primes: a
	// low-discrepancy sequence (common practice in quasi-Monte Carlo).
	steps := []float64{math.Sqrt2 - 1, math.Sqrt(3) - 1, math.Sqrt(5) - 2, math.Sqrt(7) - 2}
	for k := range cols {
		u := 0.5
		for i := 0; i < n; i++ {
			u += steps[k%len(steps)]
			u -= math.Floor(u)
			cols[k][i] = lo[k] + (hi[k]-lo[k])*(0.02+0.96*u)
		}
	}
}

func sliceCols(cols [][]float64, n int) [][]float64 {
	out := make([][]float64, len(cols))
	for k := range cols {
		out[k] = cols[k][:n]
	}
	return out
}

// roundDuration rounds d for a message: two significant figures or so.
func roundDuration(d time.Duration) time.Duration {
	switch {
	case d >= time.Hour:
		return d.Round(time.Minute)
	case d >= time.Minute:
		return d.Round(time.Second)
	case d >= time.Second:
		return d.Round(100 * time.Millisecond)
	case d >= time.Millisecond:
		return d.Round(100 * time.Microsecond)
	case d >= time.Microsecond:
		return d.Round(100 * time.Nanosecond)
	}
	return d
}

// countString writes a count for a message: 2.8 million, 41,000, 961.
func countString(n int) string {
	switch {
	case n >= 1e9:
		return fmt.Sprintf("%.2g billion", float64(n)/1e9)
	case n >= 1e6:
		return fmt.Sprintf("%.2g million", float64(n)/1e6)
	}
	return fmt.Sprint(n)
}
