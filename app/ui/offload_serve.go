package ui

import (
	"context"
	"errors"
	"sync"
	"time"

	"bellcheck/app/jsdom"
	"bellcheck/engine"
	"bellcheck/engine/model"
)

// workerSlice is how long the worker's analysis runs before it pauses for
// the worker's messages (a stop, a newer request): nothing else waits for
// the worker's thread, so its slices are longer than the page's.
const workerSlice = 30 * time.Millisecond

// ServeAnalyses makes the program the page's analysis worker (offload.go):
// it answers the page's requests, one analysis at a time, until the
// program ends. A newer request or a stop cancels the running analysis.
func ServeAnalyses() error {
	s := &analysisServer{post: jsdom.PostToPage}
	return jsdom.ServeWorker(s.receive)
}

// analysisServer is the worker's side: the running analysis and the last
// forecast.
type analysisServer struct {
	// post sends a message to the page (jsdom.PostToPage; a test connects
	// a client in the same program).
	post   func([]byte) error
	mu     sync.Mutex
	gen    uint64
	cancel context.CancelFunc
	memo   forecastMemo
}

// receive takes a message of the page (in the worker's event handler: it
// only cancels and starts).
func (s *analysisServer) receive(b []byte) {
	var req workRequest
	gen, err := unframeInto(b, &req)
	if errors.Is(err, errShortFrame) {
		return
	}
	s.mu.Lock()
	if s.cancel != nil && (err != nil || !req.Stop || s.gen <= gen) {
		s.cancel()
		s.cancel = nil
	}
	if err != nil || req.Stop {
		s.mu.Unlock()
		if err != nil {
			s.reply(gen, workReply{Kind: replyRefused, Err: err.Error()})
		}
		return
	}
	ctx, cancel := context.WithCancel(context.Background())
	s.gen, s.cancel = gen, cancel
	s.mu.Unlock()
	go s.run(ctx, gen, req, time.Now())
}

// reply posts a reply for analysis gen.
func (s *analysisServer) reply(gen uint64, r workReply) {
	b, err := frame(gen, r)
	if err != nil {
		b, _ = frame(gen, workReply{Kind: replyFailed, Err: "the worker could not send its result: " + err.Error()})
	}
	_ = s.post(b)
}

// run runs one request as the page's runner would (boundedAnalyse): the
// model rebuilt from the text, the table and the sliders' values, the
// forecast against the page's bound, then the analysis, pausing every
// workerSlice so a stop or a newer request is heard.
func (s *analysisServer) run(ctx context.Context, gen uint64, req workRequest, arrived time.Time) {
	m, file, errs := parseModel(req.Source, req.Data)
	if errs != nil {
		s.reply(gen, workReply{Kind: replyRefused, Err: errs.Error()})
		return
	}
	m = withConstants(m, file.Vary, req.Constants)
	if model.Format(m) != req.Canonical {
		s.reply(gen, workReply{Kind: replyRefused, Err: "the worker's model differs from the page's"})
		return
	}
	r := workReply{Setup: time.Since(arrived)}
	est, ok := s.memo.of(req.Work)
	if !ok {
		began := time.Now()
		var err error
		est, err = forecastWork(ctx, m, req.Options, req.MaxTime)
		r.EstimateTime = time.Since(began)
		if ctx.Err() != nil {
			return
		}
		if err != nil {
			r.Kind, r.Err = replyFailed, err.Error()
			s.reply(gen, r)
			return
		}
		s.memo.keep(req.Work, est)
	}
	r.Estimate = est // the page keeps it too (smallWork)
	if est.Total > req.MaxTime {
		r.Kind = replyTooLong
		r.Points = est.PointsWithin(req.MaxTime / offerMargin)
		s.reply(gen, r)
		return
	}
	began := time.Now()
	y := newYielder(workerSlice)
	var lastReport time.Time
	var early engine.EarlyFunc
	if req.Early {
		early = func(first *engine.Result) {
			if ctx.Err() != nil {
				return
			}
			e := workReply{Kind: replyEarly, Result: first, Analysis: time.Since(began)}
			if req.View != nil {
				tf, pf := time.Now(), y.paused
				e.Figures = sendFigures(buildFigures(first, req.View.view(), y.Yield))
				e.FigureTime = time.Since(tf) - (y.paused - pf)
			}
			if ctx.Err() == nil {
				s.reply(gen, e)
			}
		}
	}
	res, err := engine.AnalyseEarly(ctx, m, req.Options, func(pr engine.Progress) {
		y.Yield()
		if now := time.Now(); now.Sub(lastReport) >= reportEvery && ctx.Err() == nil {
			lastReport = now
			s.reply(gen, workReply{Kind: replyProgress, Progress: pr})
		}
	}, early)
	if ctx.Err() != nil {
		return // stopped, or a newer request came: the page no longer waits
	}
	r.Analysis, r.Yields = time.Since(began), y.count
	if err != nil {
		r.Kind, r.Err = replyFailed, err.Error()
	} else {
		r.Kind, r.Result = replyResult, res
		if req.View != nil {
			tf, pf := time.Now(), y.paused
			r.Figures = sendFigures(buildFigures(res, req.View.view(), y.Yield))
			r.FigureTime = time.Since(tf) - (y.paused - pf)
			if ctx.Err() != nil {
				return
			}
		}
	}
	r.Total = time.Since(arrived)
	s.reply(gen, r)
}
