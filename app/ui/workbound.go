package ui

import (
	"context"
	"encoding/json"
	"fmt"
	"sync"
	"time"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/engine"
	"bellcheck/engine/model"
)

// PageMaxTime is the longest analysis the page starts: one forecast to take
// longer (engine.EstimateWork) is not run; the page says so and offers a
// coarser grid that fits. The command line's --max-time allows more.
var PageMaxTime = 30 * time.Second

// TooLongError is the outcome of an analysis the page did not start
// because its forecast exceeds PageMaxTime.
type TooLongError struct {
	Estimate engine.Estimate
	Limit    time.Duration
	// Points is the grid points per parameter forecast to fit within the
	// limit (0 for none).
	Points int
}

func (e *TooLongError) Error() string {
	msg := fmt.Sprintf("it would take %v, more than the %v the page allows", e.Estimate, e.Limit)
	if e.Points > 0 {
		return msg + fmt.Sprintf("; a coarser grid of %d points per parameter fits (see the notice above), or run it with the command line: bellcheck fit --max-time 1h FILE", e.Points)
	}
	return msg + "; even the coarsest grid would take longer: summarise the data (for instance by counts) or use fewer observations, or run it with the command line: bellcheck fit --max-time 1h FILE"
}

// forecastWork is engine.EstimateWork, measured again where it exceeds
// limit (up to twice, forecastPause apart; the smallest stands). Right
// after the page or the worker loads, V8 runs the program's WebAssembly in
// a baseline tier several times slower than the optimised code it compiles
// meanwhile: a Student-t model of 300 readings was forecast at 110-173 us a
// grid point there and evaluates at about 20, and the page refused an
// analysis of seconds as over its 30 s. A refusal rests on a measurement
// taken after those pauses; an analysis within the limit starts at once.
func forecastWork(ctx context.Context, m *model.Model, opts engine.Options, limit time.Duration) (engine.Estimate, error) {
	return remeasured(ctx, limit, func() (engine.Estimate, error) { return engine.EstimateWork(ctx, m, opts) })
}

// remeasured is forecastWork with the measurement as a function.
func remeasured(ctx context.Context, limit time.Duration, measure func() (engine.Estimate, error)) (engine.Estimate, error) {
	est, err := measure()
	for try := 0; err == nil && est.Total > limit && try < forecastRetries; try++ {
		select {
		case <-ctx.Done():
			return est, ctx.Err()
		case <-time.After(forecastPause):
		}
		again, err := measure()
		if err != nil {
			break
		}
		if again.Total < est.Total {
			est = again
		}
	}
	return est, err
}

// forecastRetries and forecastPause: see forecastWork. The pause lets the
// browser's compiler, on another thread, finish the optimised code.
const (
	forecastRetries = 2
	forecastPause   = 50 * time.Millisecond
)

// offerMargin is how much faster than the bound the offered coarser grid is
// forecast to run: taking the offer times the density again, and a timing
// moves by a factor of up to about 2 on a busy machine, so a grid that fits
// the bound only just would be refused in its turn.
const offerMargin = 2

// boundedAnalyse returns the page's analysis: it forecasts the work first
// and refuses an analysis beyond PageMaxTime with a TooLongError, offering
// the coarser grid in the notice (through actx). work names the analysis's
// work (workIdentity): the forecast of the last work forecast is kept, and
// the same work again (a comment typed, a slider moved) is not forecast
// again. (The forecast times the density for at least 15 ms where a point
// costs over a microsecond, and its derivatives for about 4 ms more.) early, when set,
// receives the analysis's early results (engine.AnalyseEarly).
func (p *Page) boundedAnalyse(actx app.Context, work string, early engine.EarlyFunc) AnalyseFunc {
	return func(ctx context.Context, m *model.Model, opts engine.Options, progress engine.ProgressFunc) (*engine.Result, error) {
		return p.bounded(actx, ctx, work, m, opts, progress, early)
	}
}

func (p *Page) bounded(actx app.Context, ctx context.Context, work string, m *model.Model, opts engine.Options, progress engine.ProgressFunc, early engine.EarlyFunc) (*engine.Result, error) {
	p.estimateTime = 0
	est, ok := p.memo.of(work)
	if !ok {
		began := time.Now()
		var err error
		est, err = forecastWork(ctx, m, opts, PageMaxTime)
		p.estimateTime = time.Since(began)
		if err != nil {
			return nil, err
		}
		p.memo.keep(work, est)
	}
	if est.Total <= PageMaxTime {
		return engine.AnalyseEarly(ctx, m, opts, progress, early)
	}
	tl := &TooLongError{Estimate: est, Limit: PageMaxTime, Points: est.PointsWithin(PageMaxTime / offerMargin)}
	actx.Dispatch(func(app.Context) { p.offerCoarser(m, tl) })
	return nil, tl
}

// forecastMemo is the last forecast and the work it is for (the analyses
// run on goroutines of their own).
type forecastMemo struct {
	mu   sync.Mutex
	work string
	est  engine.Estimate
}

// keep keeps the forecast est of work.
func (m *forecastMemo) keep(work string, est engine.Estimate) {
	if work == "" {
		return
	}
	m.mu.Lock()
	defer m.mu.Unlock()
	m.work, m.est = work, est
}

// of returns the kept forecast of work, if any.
func (m *forecastMemo) of(work string) (engine.Estimate, bool) {
	m.mu.Lock()
	defer m.mu.Unlock()
	if work == "" || m.work != work {
		return engine.Estimate{}, false
	}
	return m.est, true
}

// workIdentity names an analysis's work for the forecast's memo: the
// model's statements in canonical form (no comments; the text's values of
// the constants a slider moves, not the slider's), the attached table's
// digest and the options. Two analyses with the same identity evaluate the
// same density, up to the sliders' values, on the same grids.
func workIdentity(m *model.Model, digest string, opts engine.Options) string {
	if m == nil {
		return ""
	}
	raw, err := json.Marshal(opts)
	if err != nil {
		return ""
	}
	return model.Format(m) + "\x00" + digest + "\x00" + string(raw)
}

// offerCoarser puts the refusal in the notice, with the coarser grid as its
// offer when there is one.
func (p *Page) offerCoarser(m *model.Model, tl *TooLongError) {
	if p.s.Model != m {
		return // the text changed meanwhile
	}
	n := Notice{Text: "This analysis was not started: " + tl.Error() + ".", Warn: true}
	if tl.Points > 0 {
		st := p.shareState()
		st.Params = make([]engine.ParamOptions, len(m.Params))
		for i, prm := range m.Params {
			st.Params[i] = p.s.Param(prm.Name)
			st.Params[i].Points = tl.Points
		}
		n.Action, n.Offer = fmt.Sprintf("Use %d points per parameter", tl.Points), &st
	}
	p.notice = n
}
