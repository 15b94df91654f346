package ui

import (
	"context"
	"fmt"
	"slices"
	"strings"
	"time"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/jsdom"
	"bellcheck/engine"
	"bellcheck/engine/model"
	"bellcheck/engine/transform"
)

// Timing of the page's reactions.
const (
	// CheckDelay is how long the page waits after a keystroke before it
	// checks the text (so a burst of typing is checked once).
	CheckDelay = 150 * time.Millisecond
	// ProgressDelay is how long an analysis runs before its progress bar
	// shows.
	ProgressDelay = 300 * time.Millisecond
	// SliceLength is how long the analysis works before it lets the
	// browser run (Go in WebAssembly is not preemptive).
	SliceLength = 15 * time.Millisecond
	// PersistDelay is how long the page waits after a change before it
	// saves the state in the URL and the browser's storage.
	PersistDelay = 250 * time.Millisecond
	// reportEvery limits progress updates of the page.
	reportEvery = 80 * time.Millisecond
	// handOverSlice is the longest the runner's work before the page's
	// update may run without a pause (see start).
	handOverSlice = 4 * time.Millisecond
)

// Performance marks the runner records (performance.mark) for every
// analysis, so a script or a trace can split the time from a keystroke to
// the result drawn: the analysis starts, its result is ready, the figures
// and the table are prepared, the page takes the result, and the page's
// update is done (the browser then lays out and paints).
//
// A 3-D or 4-D analysis in the worker also shows its result before the
// pair plots (engine.AnalyseEarly): MarkEarly when the page takes that
// early result, MarkEarlyUpdated when its update is done.
const (
	MarkEarly        = "bc-early"
	MarkEarlyUpdated = "bc-early-updated"
	MarkStart        = "bc-start"
	MarkResult       = "bc-result"
	MarkPrepared     = "bc-prepared"
	MarkHanded       = "bc-handed"
	MarkUpdated      = "bc-updated"
)

// MarkMain is recorded once, when the page's program starts (its wasm
// downloaded, compiled and instantiated): a cold load splits there.
const MarkMain = "bc-main"

// AnalyseFunc runs an analysis; engine.Analyse is the page's.
type AnalyseFunc func(context.Context, *model.Model, engine.Options, engine.ProgressFunc) (*engine.Result, error)

// runner is the page's analysis runner: it runs one analysis at a time
// off the page's event handlers, slicing the work so the browser stays
// responsive, and prepares the figures and the table of its result before
// it hands them to the page.
type runner struct {
	// analyse runs analyses (engine.Analyse unless a test sets it).
	analyse AnalyseFunc
	// cancel stops the running analysis (nil when none runs).
	cancel context.CancelFunc
	// sliderPending reports a slider moved while an analysis ran: one
	// analysis for the newest value follows when it ends. A slider does not
	// cancel the running analysis, so a drag draws a result per analysis
	// instead of none until it stops; nothing queues beyond the one.
	sliderPending bool
	// progress reports that the progress bar shows (the analysis has run
	// for ProgressDelay).
	progress bool
	// figTime and drawTime are how long the page took to draw the last
	// result's figures and to put it on the page.
	figTime, drawTime time.Duration
	// stopped reports that the user stopped the last analysis (StopAnalysis)
	// after stoppedAfter; starting another clears it.
	stopped      bool
	stoppedAfter time.Duration
	// estimateTime is how long the last forecast of an analysis's work
	// took (workbound.go); memo keeps the last forecast.
	estimateTime time.Duration
	memo         forecastMemo
	// worker runs the analyses off the page's thread once it is ready
	// (offload.go).
	worker workerClient
}

// PageTimes are the page's own timings of the last result.
type PageTimes struct {
	// Elapsed is the whole analysis as the page saw it, Longest the
	// longest stretch it ran without yielding to the browser.
	Elapsed, Longest time.Duration
	// Figures is the time to draw the figures, Update the time to put the
	// result on the page.
	Figures, Update time.Duration
}

// stop cancels the running analysis, if any; its result will be ignored.
func (p *Page) stop() {
	if p.cancel != nil {
		p.cancel()
		p.cancel = nil
	}
	p.s.Cancel()
	p.progress = false
	p.sliderPending = false
}

// start cancels the running analysis and starts one for the current model.
// The analysis runs on its own goroutine and yields to the browser every
// SliceLength from its progress callback; its result is accepted only if no
// newer analysis was requested meanwhile.
func (p *Page) start(ctx app.Context) {
	if p.ctx != nil {
		ctx = *p.ctx
	}
	if p.cancel != nil {
		p.cancel()
		p.cancel = nil
	}
	p.sliderPending = false
	run, ok := p.s.Begin(time.Now())
	if !ok {
		return
	}
	p.stopped = false
	actx, cancel := context.WithCancel(context.Background())
	p.cancel = cancel
	p.progress = false
	analyse := p.analyse
	y := newYielder(SliceLength)
	view := p.view
	var remote *remoteRun
	if analyse == nil {
		work := workIdentity(p.s.Model, p.data.digest, run.Options)
		// On the page's own thread only the exact result before the fits
		// is shown early (a model whose fits take seconds: drawing it costs
		// far less than the wait); the one before the pairs waits for the
		// whole result there.
		exactFirst := func(res *engine.Result) {
			if res.FitsToCome {
				p.showEarly(ctx, run, view, res, nil, y)
			}
		}
		analyse = p.boundedAnalyse(ctx, work, exactFirst) // workbound.go
		if p.worker.isReady() && !p.smallWork(work) {
			remote = p.newRemoteRun(run, work) // offload.go
			analyse = p.remoteAnalyse(ctx, remote, analyse, y.Rest)
		}
	}
	if remote != nil {
		remote.req.Early = true
		remote.early = func(res *engine.Result, figs *FigureSet) {
			p.showEarly(ctx, run, view, res, figs, y)
		}
	}
	ctx.After(ProgressDelay, func(ctx app.Context) {
		if p.s.Gen != run.Gen || !p.s.Running {
			ctx.PreventUpdate() // the analysis is over: nothing to show
			return
		}
		p.progress = true
	})
	_ = jsdom.Mark(MarkStart) // natively there is nothing to mark
	ctx.Async(func() {
		began := time.Now()
		g0 := readGC()
		y.Rest()
		var lastReport time.Time
		res, err := analyse(actx, run.Model, run.Options, func(pr engine.Progress) {
			y.Yield()
			if now := time.Now(); now.Sub(lastReport) >= reportEvery {
				lastReport = now
				ctx.Dispatch(func(ctx app.Context) {
					if !p.s.Report(run.Gen, pr) {
						ctx.PreventUpdate()
					}
				})
			}
		})
		g1 := readGC()
		d := g1.detail(g0)
		d["analysis_ms"], d["yields"], d["paused_ms"] = millis(time.Since(began)), float64(y.count), millis(y.paused)
		if res != nil {
			d["engine_ms"] = res.Timing.Total
		}
		d["estimate_ms"] = millis(p.estimateTime)
		if remote != nil && remote.inWorker {
			// The analysis ran in the worker: its own figures, and the
			// page's time to read the result.
			d["in_worker"], d["decode_ms"] = 1, millis(remote.decode)
			d["worker_analysis_ms"], d["worker_yields"] = millis(remote.reply.Analysis), float64(remote.reply.Yields)
			d["worker_setup_ms"], d["worker_total_ms"] = millis(remote.reply.Setup), millis(remote.reply.Total)
			d["post_ms"], d["round_trip_ms"] = millis(remote.post), millis(remote.roundTrip)
		}
		_ = jsdom.MarkDetail(MarkResult, d)
		var figs *FigureSet
		var secs []Section
		var figTime, tableTime time.Duration
		workerFigs := -1.0 // the worker's time to draw the figures it sent
		if err == nil && res != nil && actx.Err() == nil {
			y.Yield()
			tf, pf := time.Now(), y.paused
			if figs = remote.figures(res, view); figs == nil { // offload_figures.go
				figs = buildFigures(res, view, y.Yield)
			} else {
				workerFigs = millis(remote.reply.FigureTime)
			}
			figs = numbered(figs)
			figTime = time.Since(tf) - (y.paused - pf) // the pauses between 3-D and 4-D panels left out
			y.Yield()
			tt := time.Now()
			secs = Table(res, run.Model)
			tableTime = time.Since(tt)
		}
		g2 := readGC()
		d = g2.detail(g1)
		d["figures_ms"], d["table_ms"] = millis(figTime), millis(tableTime)
		if workerFigs >= 0 {
			d["worker_figures_ms"] = workerFigs
		}
		_ = jsdom.MarkDetail(MarkPrepared, d)
		// The page's update that follows a worker's result is a long
		// stretch of its own (30 to 40 ms for a 4-D result): it starts a
		// task of its own unless the work before it was short. (After an
		// analysis on the page, whose results are small, a pause would
		// only let a frame in first.)
		if remote != nil && remote.inWorker {
			y.YieldAfter(handOverSlice)
		} else {
			y.Yield()
		}
		elapsed, longest := time.Since(began), y.Longest()
		ctx.Dispatch(func(ctx app.Context) {
			if !p.s.Finish(run, res, err, elapsed, longest) {
				ctx.PreventUpdate() // an outdated result: nothing changes
				return
			}
			_ = jsdom.Mark(MarkHanded)
			g3 := readGC()
			p.figTime = figTime
			drawStart := time.Now()
			ctx.Defer(func(app.Context) {
				p.drawTime = time.Since(drawStart)
				d := readGC().detail(g3)
				d["update_ms"] = millis(p.drawTime)
				_ = jsdom.MarkDetail(MarkUpdated, d)
			})
			p.afterRender(ctx)
			p.progress = false
			if err == nil && res != nil {
				if p.view != view {
					figs = numbered(BuildFigures(res, p.view))
				}
				p.figs, p.sections = keepDrawn(p.figs, figs), secs
			}
			if p.sliderPending {
				p.start(ctx)
			}
			// The worker loads once the page has shown its first result
			// (offload.go); meanwhile the page analyses itself.
			p.worker.start()
		})
	})
}

// showEarly puts the early result of run (all but its pair plots) on the
// page while the analysis goes on: the figures the worker drew with view
// (figs; drawn here when nil) and the table. It runs on the runner's
// goroutine.
func (p *Page) showEarly(ctx app.Context, run Run, view View, res *engine.Result, figs *FigureSet, y *yielder) {
	if figs == nil {
		figs = buildFigures(res, view, y.Yield)
	}
	figs = numbered(figs)
	y.Yield()
	secs := Table(res, run.Model)
	y.YieldAfter(handOverSlice)
	ctx.Dispatch(func(ctx app.Context) {
		if !p.s.Early(run, res) {
			ctx.PreventUpdate() // outdated: nothing changes
			return
		}
		_ = jsdom.Mark(MarkEarly)
		ctx.Defer(func(app.Context) { _ = jsdom.Mark(MarkEarlyUpdated) })
		p.afterRender(ctx)
		if p.view != view {
			figs = numbered(BuildFigures(res, p.view))
		}
		p.figs, p.sections = keepDrawn(p.figs, figs), secs
	})
}

// StopAnalysis implements StopHost: it cancels the running analysis at the
// user's word and says so in the notice. The text, the options and the
// results shown stay as they are (dimmed: they are not the current
// model's); nothing is written or lost.
func (p *Page) StopAnalysis(ctx app.Context) {
	if !p.s.Running {
		return
	}
	took := time.Since(p.s.Started)
	stage := stageName(p.s.Progress.Stage)
	if p.s.Progress.Stage == "" {
		stage = "starting"
	}
	frac := p.s.Progress.Fraction
	// An early result of this analysis (all but its pairs) stays shown.
	partial := p.s.Partial && p.s.ResultGen == p.s.Gen
	p.stop()
	p.stopped, p.stoppedAfter = true, took
	shown := "the results shown, dimmed, are from the last analysis that finished"
	if partial {
		shown = "the results shown, dimmed, are this analysis's but for the pair plots, which it had not computed"
		if r := p.s.Result; r != nil && r.FitsToCome {
			shown = "the results shown, dimmed, are this analysis's exact ones; it had not fitted the Gaussians yet"
		}
	}
	p.notice = Notice{Text: fmt.Sprintf("You stopped the analysis after %s (%.0f %% done, at: %s). Your model and settings are as you left them; %s. Run it again from the status line, or make it lighter first (fewer grid points, less data).",
		fmtSeconds(took), 100*max(0, min(1, frac)), stage, shown)}
}

// RunAgain implements StopHost: it analyses the current model again after
// a stop.
func (p *Page) RunAgain(ctx app.Context) {
	if p.s.Running || p.pending {
		return
	}
	if p.notice.Action == "" && strings.HasPrefix(p.notice.Text, "You stopped the analysis") {
		p.notice = Notice{}
	}
	p.start(ctx)
}

// yielder lets the browser run between slices of work: Go compiled to
// WebAssembly runs on the page's only thread and is not preemptive, so a
// long computation must pause itself. jsdom.Yield hands control to the
// browser's event loop (a message to itself, which returns as soon as the
// browser's pending tasks ran; a timer would wait at least 4 ms). It also
// measures the longest slice.
type yielder struct {
	every   time.Duration
	last    time.Time
	longest time.Duration
	// count and paused are the pauses made and the time they took (the
	// browser's work meanwhile included).
	count  int
	paused time.Duration
}

func newYielder(every time.Duration) *yielder {
	return &yielder{every: every, last: time.Now()}
}

// Yield pauses when the current slice has run for at least every.
func (y *yielder) Yield() { y.YieldAfter(y.every) }

// YieldAfter pauses when the current slice has run for at least d.
func (y *yielder) YieldAfter(every time.Duration) {
	now := time.Now()
	d := now.Sub(y.last)
	if d < every {
		return
	}
	y.longest = max(y.longest, d)
	jsdom.Yield()
	y.last = time.Now()
	y.count++
	y.paused += y.last.Sub(now)
}

// Rest starts a new slice: the thread was idle (waiting for the worker)
// since the last one, which is no work of the page's.
func (y *yielder) Rest() { y.last = time.Now() }

// Longest returns the longest slice measured so far, including the one
// running now.
func (y *yielder) Longest() time.Duration {
	return max(y.longest, time.Since(y.last))
}

// FitUnconstrained implements Host: each named parameter is fitted on the
// log or logit scale of its support, its other options kept, and the model
// is analysed once.
func (p *Page) FitUnconstrained(ctx app.Context, names []string) {
	if p.s.Model == nil {
		return
	}
	for _, prm := range p.s.Model.Params {
		if !slices.Contains(names, prm.Name) {
			continue
		}
		if sc := transform.Unconstrained(prm.Lo, prm.Hi); !sc.IsIdentity() {
			o := p.s.Param(prm.Name)
			o.Scale = sc
			p.s.SetParam(prm.Name, o)
		}
	}
	p.persist()
	p.syncParamFields(ctx)
	if !p.pending {
		p.start(ctx)
	}
}
