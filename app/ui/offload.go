package ui

import (
	"context"
	"encoding/binary"
	"errors"
	"maps"
	"sync"
	"time"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/jsdom"
	"bellcheck/app/wire"
	"bellcheck/engine"
	"bellcheck/engine/data"
	"bellcheck/engine/model"
)

// The page's analyses run in a dedicated worker running the same program
// (app.wasm; offload_serve.go is the worker's side), so the page's thread
// is free while the engine computes. The page starts the worker after its
// first analysis; until the worker says it is ready, and wherever it cannot
// start or fails, the page analyses on its own thread as before.
//
// A message either way is the analysis's generation (8 bytes, little
// endian) followed by a workRequest or a workReply in the wire encoding,
// which keeps every float's bits (the Result's NaN and Inf included).

// workRequest is everything the worker needs to run the analysis the page
// would: the checked text with its attached table and the sliders' values
// (the worker parses them as the page did), the options, and the model's
// canonical form, against which the worker checks its own.
type workRequest struct {
	// Stop asks the worker to drop the analysis of this generation (or an
	// older one) if it still runs.
	Stop      bool
	Source    string
	Data      *data.Table
	Constants map[string]float64
	Options   engine.Options
	// Canonical is model.Format of the model the page would analyse.
	Canonical string
	// Work names the work for the worker's forecast memo (workIdentity).
	Work string
	// MaxTime is the page's bound on the forecast (PageMaxTime).
	MaxTime time.Duration
	// View, when set, asks for the result's figures drawn with it
	// (offload_figures.go).
	View *figureView
	// Early asks for the early result (engine.AnalyseEarly) as a reply of
	// its own before the whole one.
	Early bool
}

// replyKind says what a workReply carries.
type replyKind uint8

const (
	replyProgress replyKind = iota + 1
	replyResult
	// replyFailed: the analysis failed; Err is its message.
	replyFailed
	// replyTooLong: the forecast exceeds MaxTime; Estimate and Points say
	// by how much and what fits (TooLongError).
	replyTooLong
	// replyRefused: the worker could not rebuild the page's model (its
	// canonical form differs) or read the request; the page analyses it
	// itself.
	replyRefused
	// replyEarly: the result before its pair plots (Result, Figures); the
	// analysis goes on (workRequest.Early).
	replyEarly
)

// workReply is one message of the worker about an analysis.
type workReply struct {
	Kind     replyKind
	Progress engine.Progress
	Result   *engine.Result
	Err      string
	// Figures are the result's figures, drawn with the request's View.
	Figures  *sentFigures
	Estimate engine.Estimate
	Points   int
	// EstimateTime is how long the forecast took (0 when the memo had it);
	// Analysis the analysis's time in the worker, Yields its pauses.
	EstimateTime, Analysis, FigureTime time.Duration
	// Setup is the worker's time to rebuild the model, Total its time from
	// the request's arrival to the reply (its encoding left out).
	Setup, Total time.Duration
	Yields       int
}

// frame puts the generation before a message.
func frame(gen uint64, v any) ([]byte, error) {
	b, err := wire.Marshal(v)
	if err != nil {
		return nil, err
	}
	out := make([]byte, 8, 8+len(b))
	binary.LittleEndian.PutUint64(out, gen)
	return append(out, b...), nil
}

// unframe splits a message into its generation and its body.
func unframe(b []byte) (uint64, []byte, bool) {
	if len(b) < 8 {
		return 0, nil, false
	}
	return binary.LittleEndian.Uint64(b), b[8:], true
}

// errShortFrame is a message too short to hold a generation.
var errShortFrame = errors.New("a message shorter than its generation")

// unframeInto reads a message made by frame: it returns the generation
// and decodes the body into v.
func unframeInto(b []byte, v any) (uint64, error) {
	gen, body, ok := unframe(b)
	if !ok {
		return 0, errShortFrame
	}
	return gen, wire.Unmarshal(body, v)
}

// workerState is where the page's worker stands.
type workerState int

const (
	workerNone workerState = iota
	workerStarting
	workerReady
	workerFailed
)

// workerClient is the page's side of the worker: it starts it, posts
// requests and hands each reply to the analysis of its generation.
type workerClient struct {
	mu    sync.Mutex
	state workerState
	w     *jsdom.Worker
	// send posts a message to the worker (w.Post; a test connects a
	// server in the same program).
	send    func([]byte) error
	reason  string // why the worker failed
	waiting map[uint64]*inbox
}

// inbox holds the replies of one analysis until its goroutine reads them:
// the worker's messages arrive in the browser's event handler, which must
// not block.
type inbox struct {
	mu     sync.Mutex
	msgs   [][]byte
	dead   bool // the worker failed
	notify chan struct{}
}

func (in *inbox) put(b []byte, dead bool) {
	in.mu.Lock()
	if b != nil {
		in.msgs = append(in.msgs, b)
	}
	in.dead = in.dead || dead
	in.mu.Unlock()
	select {
	case in.notify <- struct{}{}:
	default:
	}
}

func (in *inbox) take() (msgs [][]byte, dead bool) {
	in.mu.Lock()
	defer in.mu.Unlock()
	msgs, in.msgs = in.msgs, nil
	return msgs, in.dead
}

// start starts the worker once; a failure leaves the page analysing on its
// own thread.
func (c *workerClient) start() {
	c.mu.Lock()
	if c.state != workerNone {
		c.mu.Unlock()
		return
	}
	c.state = workerStarting
	c.mu.Unlock()
	url, err := jsdom.WorkerURL()
	if err != nil {
		c.failed(err.Error())
		return
	}
	w, err := jsdom.StartWorker(url, c.received, c.ready, c.failed)
	if err != nil {
		c.failed(err.Error())
		return
	}
	c.mu.Lock()
	if c.state == workerFailed {
		c.mu.Unlock()
		w.Terminate()
		return
	}
	c.w, c.send = w, w.Post
	c.mu.Unlock()
}

func (c *workerClient) ready() {
	c.mu.Lock()
	defer c.mu.Unlock()
	if c.state == workerStarting {
		c.state = workerReady
	}
}

// failed gives up on the worker: the analyses waiting for it are told, and
// every later one runs on the page.
func (c *workerClient) failed(reason string) {
	c.mu.Lock()
	c.state, c.reason = workerFailed, reason
	w, waiting := c.w, c.waiting
	c.w, c.send, c.waiting = nil, nil, nil
	c.mu.Unlock()
	for _, in := range waiting {
		in.put(nil, true)
	}
	if w != nil {
		w.Terminate()
	}
}

// received routes a reply to its analysis (an outdated one's is dropped).
func (c *workerClient) received(b []byte) {
	gen, _, ok := unframe(b)
	if !ok {
		return
	}
	c.mu.Lock()
	in := c.waiting[gen]
	c.mu.Unlock()
	if in != nil {
		in.put(b, false)
	}
}

// isReady reports whether the worker takes requests.
func (c *workerClient) isReady() bool {
	c.mu.Lock()
	defer c.mu.Unlock()
	return c.state == workerReady
}

// post sends a request and registers the analysis's inbox (nil for a
// stop). It fails when the worker is not ready.
func (c *workerClient) post(gen uint64, req workRequest, in *inbox) error {
	b, err := frame(gen, req)
	if err != nil {
		return err
	}
	c.mu.Lock()
	send := c.send
	if c.state != workerReady || send == nil {
		c.mu.Unlock()
		return errWorkerGone
	}
	if in != nil {
		if c.waiting == nil {
			c.waiting = map[uint64]*inbox{}
		}
		c.waiting[gen] = in
	}
	c.mu.Unlock()
	if err := send(b); err != nil {
		c.done(gen)
		return err
	}
	return nil
}

// done forgets an analysis's inbox.
func (c *workerClient) done(gen uint64) {
	c.mu.Lock()
	defer c.mu.Unlock()
	delete(c.waiting, gen)
}

var errWorkerGone = errors.New("the analysis worker is not running")

// PageLocalWork is the forecast below which the page runs an analysis on
// its own thread even when the worker is ready: a message to the worker and
// back, and the worker's result read, cost 10 to 20 ms, more than such an
// analysis gains (a 2-D model's slider redraws faster on the page), and
// the page's slices of SliceLength keep it responsive meanwhile. The
// forecast is the worker's, kept by the work's identity.
const PageLocalWork = 100 * time.Millisecond

// smallWork reports whether work's last forecast is below PageLocalWork.
func (p *Page) smallWork(work string) bool {
	est, ok := p.memo.of(work)
	return ok && est.Total <= PageLocalWork
}

// remoteRun is one analysis handed to the worker, with what the runner
// reports of it.
type remoteRun struct {
	gen uint64
	req workRequest
	// inWorker reports that the worker ran it (false: it fell back to the
	// page); decode is the time to read its result on the page.
	inWorker bool
	decode   time.Duration
	reply    workReply
	// view is the page's view when the request was made.
	view View
	// post is the time to encode and post the request, roundTrip the time
	// from then to the reply taken (read, not yet decoded).
	post, roundTrip time.Duration
	// early, when set, receives the worker's early result and its figures
	// (linked to it; nil when the page must draw them), on the runner's
	// goroutine; the request asks for it then (workRequest.Early).
	early func(*engine.Result, *FigureSet)
}

// newRemoteRun prepares the request of run (on the page's event handler:
// the session's values are read now).
func (p *Page) newRemoteRun(run Run, work string) *remoteRun {
	return &remoteRun{gen: run.Gen, view: p.view, req: workRequest{
		Source: p.s.Source, Data: p.s.Data, Constants: maps.Clone(p.s.Constants), Options: run.Options,
		Canonical: model.Format(run.Model), Work: work, MaxTime: PageMaxTime, View: sentView(p.view),
	}}
}

// figures returns the worker's figures of res when they were drawn with
// view (nil otherwise: the page draws them).
func (rr *remoteRun) figures(res *engine.Result, view View) *FigureSet {
	if rr == nil || !rr.inWorker || rr.reply.Figures == nil || rr.req.View == nil || rr.view != view || rr.reply.Result != res {
		return nil
	}
	return linkFigures(rr.reply.Figures, res)
}

// remoteAnalyse returns the analysis of rr in the worker: progress is
// reported as the worker sends it, a cancelled context stops the worker's
// run, and a refusal or a failure of the worker runs the analysis on the
// page (local) instead. rest is called whenever the page's thread was idle
// (waiting), so the runner's slices measure only its own work.
func (p *Page) remoteAnalyse(actx app.Context, rr *remoteRun, local AnalyseFunc, rest func()) AnalyseFunc {
	return func(ctx context.Context, m *model.Model, opts engine.Options, progress engine.ProgressFunc) (*engine.Result, error) {
		in := &inbox{notify: make(chan struct{}, 1)}
		began := time.Now()
		if err := p.worker.post(rr.gen, rr.req, in); err != nil {
			return local(ctx, m, opts, progress)
		}
		posted := time.Now()
		rr.post = posted.Sub(began)
		defer p.worker.done(rr.gen)
		for {
			select {
			case <-ctx.Done():
				_ = p.worker.post(rr.gen, workRequest{Stop: true}, nil)
				return nil, ctx.Err()
			case <-in.notify:
			}
			msgs, dead := in.take()
			for _, b := range msgs {
				rest()
				began := time.Now()
				rr.roundTrip = began.Sub(posted)
				var r workReply
				if _, err := unframeInto(b, &r); err != nil {
					return local(ctx, m, opts, progress)
				}
				switch r.Kind {
				case replyProgress:
					progress(r.Progress)
					continue
				case replyRefused:
					return local(ctx, m, opts, progress)
				case replyEarly:
					if rr.early != nil && r.Result != nil {
						// Drawn with the request's view; showEarly draws
						// again if the page's has changed since.
						var figs *FigureSet
						if rr.req.View != nil {
							figs = linkFigures(r.Figures, r.Result)
						}
						rr.early(r.Result, figs)
					}
					continue
				}
				rr.inWorker, rr.reply, rr.decode = true, r, time.Since(began)
				p.estimateTime = r.EstimateTime
				if r.Estimate.Total > 0 {
					p.memo.keep(rr.req.Work, r.Estimate) // workbound.go; see smallWork
				}
				switch r.Kind {
				case replyResult:
					if r.Result == nil {
						return nil, errors.New("the analysis returned no result")
					}
					return r.Result, nil
				case replyTooLong:
					tl := &TooLongError{Estimate: r.Estimate, Limit: PageMaxTime, Points: r.Points}
					actx.Dispatch(func(app.Context) { p.offerCoarser(m, tl) })
					return nil, tl
				default:
					return nil, errors.New(r.Err)
				}
			}
			if dead {
				rest()
				return local(ctx, m, opts, progress)
			}
		}
	}
}
