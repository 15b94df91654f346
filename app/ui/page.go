package ui

import (
	"context"
	"math"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/examples"
	"bellcheck/app/jsdom"
	"bellcheck/app/plot"
	"bellcheck/app/share"
	"bellcheck/engine"
	"bellcheck/engine/model"
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
	// reportEvery limits progress updates of the page.
	reportEvery = 80 * time.Millisecond
)

// AnalyseFunc runs an analysis; engine.Analyse is the page's.
type AnalyseFunc func(context.Context, *model.Model, engine.Options, engine.ProgressFunc) (*engine.Result, error)

// Page is the calculator: editor, parameters and gallery on one side,
// diagnostics, plots and the results table on the other.
type Page struct {
	app.Compo

	s        Session
	initial  string // the editor's text when the page was built
	text     string // the editor's current text
	editSeq  int
	pending  bool
	example  string
	cancel   context.CancelFunc
	view     View
	figs     *FigureSet
	sections []Section
	progress bool
	// figTime and drawTime are how long the page took to draw the last
	// result's figures and to put it on the page.
	figTime, drawTime time.Duration

	// analyse runs analyses (engine.Analyse unless a test sets it).
	analyse AnalyseFunc
	// browser keeps the state in the URL and local storage (realBrowser
	// unless a test sets it); notice is the message shown above the results.
	browser Browser
	notice  Notice
	history *History // the user's models, see hist (history_view.go)
	// ctx is the page's own context once mounted: asynchronous work
	// reports through it, since the element that started the work (a
	// button, an input) may be gone when the work ends.
	ctx *app.Context

	// mode is the view the link chose (the embed view, read-only, the
	// editor folded); folded is the embed view's editor folded now.
	mode   Mode
	folded bool
	// tools is the state of the share and export tools.
	tools toolState
}

// NewPage returns the page with the default example loaded.
func NewPage() *Page {
	p := &Page{}
	p.init()
	return p
}

// OnInit loads the default example (on the server too, so the pre-rendered
// page shows it).
func (p *Page) OnInit() { p.init() }

func (p *Page) init() {
	if p.initial != "" {
		return
	}
	ex, ok := examples.ByID(examples.Default)
	if !ok {
		ex = examples.All[0]
	}
	p.example, p.initial, p.text = ex.ID, ex.Source, ex.Source
	for name, o := range ex.Params {
		p.s.SetParam(name, o)
	}
	p.s.Edit(ex.Source)
}

// OnMount opens the state of the link or of the work saved in the browser,
// watches the URL for pasted links, and starts the first analysis.
func (p *Page) OnMount(ctx app.Context) {
	p.ctx = &ctx
	if p.browser == nil {
		p.browser = realBrowser{}
	}
	_ = jsdom.OnHashChange(func() {
		ctx.Dispatch(func(ctx app.Context) { p.OpenLink(ctx) })
	})
	p.open(ctx)
	p.afterRender(ctx)
}

// open loads what Opening chooses and analyses it. An embed link, and any
// page inside a frame, opens the link alone: the browser's saved work
// belongs to the calculator opened on its own, and embeds on a wiki page
// must neither read nor overwrite it.
func (p *Page) open(ctx app.Context) {
	if p.mode.Embed || jsdom.Framed() || embedLink(p.browser.Fragment()) {
		p.openEmbedded(ctx)
		return
	}
	st, ok, n := Opening(p.browser)
	p.notice = n
	if !ok {
		p.start(ctx)
		p.persist()
		return
	}
	src, params, v := fromShare(st)
	p.initial = src
	p.LoadState(ctx, src, params, v)
}

// OpenLink opens the link now in the URL (the user pasted one into the
// address bar of the open page), keeping the work it displaces.
func (p *Page) OpenLink(ctx app.Context) {
	if p.browser == nil {
		return
	}
	frag := p.browser.Fragment()
	if frag == "" {
		return
	}
	link, err := share.Decode(frag)
	if err != nil {
		p.notice = Notice{Text: "The link could not be opened: " + linkProblem(err) + " Your model is unchanged.", Warn: true}
		p.persist() // put the current state back into the URL
		return
	}
	if p.mode.Embed {
		cur := p.shareState()
		if cur.Model == link.Model && cur.View == link.View {
			return
		}
		p.setMode(link.View)
		src, params, v := fromShare(link)
		p.LoadState(ctx, src, params, v)
		return
	}
	cur := p.shareState()
	if cur.Model == link.Model {
		return
	}
	src, params, v := fromShare(link)
	p.LoadState(ctx, src, params, v)
	p.notice = linkNotice(Notice{Text: "Opened the shared model.", Action: "Back to the model before", Offer: &cur}, LinkProblems(link))
}

// TakeOffer loads the state the notice offers, and offers the current one
// in its place, so the user can go back and forth.
func (p *Page) TakeOffer(ctx app.Context) {
	offer := p.notice.Offer
	if offer == nil {
		return
	}
	cur := p.shareState()
	src, params, v := fromShare(*offer)
	p.LoadState(ctx, src, params, v)
	p.notice = Notice{Text: "Switched models. The other one is kept.", Action: "Switch back", Offer: &cur}
}

// DismissNotice hides the notice.
func (p *Page) DismissNotice(ctx app.Context) { p.notice = Notice{} }

// ForgetEarlier deletes the history entry the notice offers, at the user's
// word.
func (p *Page) ForgetEarlier(ctx app.Context) {
	if p.browser != nil {
		p.hist().Remove(p.notice.Key)
	}
	p.notice = Notice{}
}

// shareState is the current state in the link format, with the view the
// page was opened in (the embed view's choices).
func (p *Page) shareState() share.State {
	m := p.s.Model
	if m == nil {
		m = p.s.LastGood
	}
	st := toShare(p.text, m, p.s.Param, p.view)
	st.View.Embed, st.View.ReadOnly, st.View.EditorCollapsed = p.mode.Embed, p.mode.ReadOnly, p.mode.Folded
	return st
}

// persist saves the current state in local storage and in the URL, so a
// reload restores it and the address bar always holds a link to it.
func (p *Page) persist() {
	if p.browser == nil {
		return
	}
	frag, err := share.Encode(p.shareState())
	if err != nil {
		return // too long for a link: the text stays in the editor only
	}
	if !p.mode.Embed {
		_ = p.hist().Record(p.shareState(), frag) // storage refused: the state stays in the URL
	}
	p.browser.SetFragment(frag)
}

// OnDismount stops a running analysis.
func (p *Page) OnDismount() {
	if p.cancel != nil {
		p.cancel()
	}
}

// Session returns the page's state (for tests and the share/export parts).
func (p *Page) Session() *Session { return &p.s }

// Input implements Host: it records the text and checks it once typing
// pauses for CheckDelay.
func (p *Page) Input(ctx app.Context, text string) {
	if text == p.text {
		return
	}
	p.text, p.example, p.pending = text, "", true
	p.stop() // the running analysis is for an outdated text: free the CPU for typing
	p.editSeq++
	seq := p.editSeq
	if p.ctx != nil {
		ctx = *p.ctx
	}
	ctx.After(CheckDelay, func(ctx app.Context) {
		if seq == p.editSeq {
			p.check(ctx)
		}
	})
}

// check checks the editor's text and starts an analysis when it is valid;
// while it is not, a running analysis stops and the last results stay
// shown, dimmed.
func (p *Page) check(ctx app.Context) {
	p.pending = false
	valid := p.s.Edit(p.text)
	p.persist()
	if valid {
		p.start(ctx)
		return
	}
	p.stop()
}

// stop cancels the running analysis, if any; its result will be ignored.
func (p *Page) stop() {
	if p.cancel != nil {
		p.cancel()
		p.cancel = nil
	}
	p.s.Cancel()
	p.progress = false
}

// SetParam implements Host.
func (p *Page) SetParam(ctx app.Context, name string, o engine.ParamOptions) {
	p.s.SetParam(name, o)
	p.persist()
	if p.s.Model != nil && !p.pending {
		p.start(ctx)
	}
}

// LoadExample implements Host.
func (p *Page) LoadExample(ctx app.Context, id string) {
	ex, ok := examples.ByID(id)
	if !ok {
		return
	}
	p.LoadState(ctx, ex.Source, ex.Params, p.view)
	p.example = ex.ID
}

// LoadState replaces the whole calculator state (model text, options by
// parameter name, view) and analyses it: for examples, and for restoring a
// shared link or saved work.
func (p *Page) LoadState(ctx app.Context, src string, params map[string]engine.ParamOptions, v View) {
	p.editSeq++ // drop a pending check of the old text
	p.pending = false
	p.text, p.example = src, ""
	_ = jsdom.SetValue(EditorID, src) // natively there is no editor to set
	p.s.ResetParams()
	for name, o := range params {
		p.s.SetParam(name, o)
	}
	p.view = v
	if p.browser != nil && !p.mode.Embed {
		p.hist().Loaded()
	}
	p.check(ctx)
}

// State returns the calculator state to save or share: the editor's text,
// the options of the current model's parameters by name, and the view.
func (p *Page) State() (src string, params map[string]engine.ParamOptions, v View) {
	params = map[string]engine.ParamOptions{}
	m := p.s.Model
	if m == nil {
		m = p.s.LastGood
	}
	if m != nil {
		for _, prm := range m.Params {
			if o := p.s.Param(prm.Name); o != (engine.ParamOptions{}) {
				params[prm.Name] = o
			}
		}
	}
	return p.text, params, p.view
}

// SetView implements Host.
func (p *Page) SetView(ctx app.Context, log bool, hidden [plot.NumMethods]bool) {
	p.view = View{Log: log, Hidden: hidden}
	p.figs = BuildFigures(p.s.Result, p.view)
	p.persist()
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
	run, ok := p.s.Begin(time.Now())
	if !ok {
		return
	}
	actx, cancel := context.WithCancel(context.Background())
	p.cancel = cancel
	p.progress = false
	analyse := p.analyse
	if analyse == nil {
		analyse = p.boundedAnalyse(ctx) // workbound.go
	}
	view := p.view
	ctx.After(ProgressDelay, func(ctx app.Context) {
		if p.s.Gen == run.Gen && p.s.Running {
			p.progress = true
		}
	})
	ctx.Async(func() {
		began := time.Now()
		y := newYielder(SliceLength)
		var lastReport time.Time
		res, err := analyse(actx, run.Model, run.Options, func(pr engine.Progress) {
			y.Yield()
			if now := time.Now(); now.Sub(lastReport) >= reportEvery {
				lastReport = now
				ctx.Dispatch(func(ctx app.Context) { p.s.Report(run.Gen, pr) })
			}
		})
		var figs *FigureSet
		var secs []Section
		var figTime time.Duration
		if err == nil && res != nil && actx.Err() == nil {
			y.Yield()
			tf := time.Now()
			figs = BuildFigures(res, view)
			figTime = time.Since(tf)
			y.Yield()
			secs = Table(res, run.Model)
		}
		y.Yield()
		elapsed, longest := time.Since(began), y.Longest()
		ctx.Dispatch(func(ctx app.Context) {
			if !p.s.Finish(run, res, err, elapsed, longest) {
				return
			}
			p.figTime = figTime
			drawStart := time.Now()
			ctx.Defer(func(app.Context) { p.drawTime = time.Since(drawStart) })
			p.afterRender(ctx)
			p.progress = false
			if err == nil && res != nil {
				if p.view != view {
					figs = BuildFigures(res, p.view)
				}
				p.figs, p.sections = figs, secs
			}
		})
	})
}

// Render draws the page: the full calculator, or the compact embed view.
func (p *Page) Render() app.UI {
	if p.mode.Embed {
		return p.renderEmbed()
	}
	stale := p.s.Stale()
	return app.Div().ID(RootID).Class("page").Body(
		p.header(),
		p.toolTray(),
		p.noticeBar(),
		app.Main().Class("layout").Body(
			app.Section().Class("col-input").Aria("label", "Model and settings").Body(
				card("Model", "bc-h-model",
					&Editor{Host: p, Initial: p.initial, Text: p.text, Checked: p.s.Source, Errors: p.s.Errors, Pending: p.pending}),
				card("Parameters", "bc-h-params", &ParamPanel{Host: p, Params: ParamViews(&p.s), Stale: p.s.Model == nil}),
				card("Examples", "bc-h-examples", &Gallery{Host: p, Current: p.example}),
				p.historyCard(),
			),
			p.output("col-output").Body(
				card("Diagnostics", "bc-h-diag", p.diagnostics(stale)),
				card("Plots", "bc-h-plots", &PlotPanel{Host: p, Set: p.figs, View: p.view, Stale: stale}),
				card("Results", "bc-h-results", &ResultsTable{Sections: p.sections, Stale: stale}),
				card("Modes and grid", "bc-h-modes", p.modesAndGrid(stale)),
			),
		),
		&Footer{},
	)
}

func (p *Page) noticeBar() app.UI {
	n := p.notice
	if n.Text == "" {
		return app.Div().Class("notice-slot")
	}
	cls := "notice"
	if n.Warn {
		cls += " notice-warn"
	}
	return app.Div().Class("notice-slot").Body(
		app.Div().Class(cls).Attr("role", "status").Body(
			app.Span().Class("notice-text").Text(n.Text),
			app.If(n.Action != "", func() app.UI {
				return app.Button().Type("button").Class("notice-action").Text(n.Action).OnClick(func(ctx app.Context, e app.Event) { p.TakeOffer(ctx) })
			}),
			app.If(n.Forget, func() app.UI {
				return app.Button().Type("button").Class("notice-action").Text("Forget it").OnClick(func(ctx app.Context, e app.Event) { p.ForgetEarlier(ctx) })
			}),
			app.Button().Type("button").Class("notice-close").Aria("label", "dismiss this notice").Text("×").
				OnClick(func(ctx app.Context, e app.Event) { p.DismissNotice(ctx) }),
		),
	)
}

func card(title, id string, body ...app.UI) app.UI {
	return app.Section().Class("card").Aria("labelledby", id).Body(
		append([]app.UI{app.H2().ID(id).Text(title)}, body...)...,
	)
}

// logoSVG is the page's mark: a bell curve and its dashed Gaussian double.
// It is a constant: no text from outside reaches app.Raw.
const logoSVG = `<svg class="logo" viewBox="0 0 32 32" width="26" height="26" aria-hidden="true" focusable="false"><path d="M2 27 C8 27 10 6 16 6 C22 6 24 27 30 27" fill="none" stroke="#1d3b53" stroke-width="2.4"/><path d="M4 27 C9 27 11 11 16 11 C21 11 23 27 28 27" fill="none" stroke="#c36121" stroke-width="1.6" stroke-dasharray="3 2"/></svg>`

func (p *Page) header() app.UI {
	return app.Header().Class("top").Body(
		app.Div().Class("brand").Body(
			app.Raw(logoSVG),
			app.Span().Class("wordmark").Text("bellcheck"),
			app.Span().Class("tagline").Text("the exact posterior beside its Gaussian approximations"),
		),
		app.Div().Class("top-right").Body(
			p.runStatus(),
			p.toolbar(),
		),
	)
}

func (p *Page) runStatus() app.UI {
	st := app.Div().Class("run-status").Attr("role", "status")
	switch {
	case p.s.Running && p.progress:
		frac := math.Max(0, math.Min(1, p.s.Progress.Fraction))
		stage := p.s.Progress.Stage
		if stage == "" {
			stage = "starting"
		}
		return st.Body(
			app.Label().For("bc-progress").Text("analysing: "+stageName(stage)),
			app.Progress().ID("bc-progress").Max(1).Value(strconv.FormatFloat(frac, 'f', 3, 64)),
		)
	case p.s.Running:
		return st.Body(app.Span().Class("muted").Text("analysing…"))
	case p.pending:
		return st.Body(app.Span().Class("muted").Text("editing…"))
	case p.s.Errors != nil:
		return st.Body(app.Span().Class("warn-text").Text("the model has errors: results shown are for the last valid model"))
	case p.s.RunErr != nil:
		return st.Body(app.Span().Class("warn-text").Text("the analysis failed"))
	case p.s.Result != nil:
		return st.Body(app.Span().Class("muted").Text("analysed in " + fmtMillis(p.s.Elapsed)))
	}
	return st
}

func stageName(s string) string {
	switch s {
	case "grid":
		return "exact density on the grid"
	case "modes":
		return "searching modes"
	case "laplace":
		return "Laplace fit"
	case "reverse_kl":
		return "reverse-KL fit"
	case "mean_field":
		return "mean-field fit"
	case "forward_kl":
		return "moment matching"
	case "ep":
		return "expectation propagation"
	case "compare":
		return "comparing"
	case "plots":
		return "plots"
	}
	return strings.ReplaceAll(s, "_", " ")
}

func fmtMillis(d time.Duration) string {
	ms := float64(d) / float64(time.Millisecond)
	if ms < 10 {
		return strconv.FormatFloat(ms, 'f', 1, 64) + " ms"
	}
	return strconv.FormatFloat(math.Round(ms), 'f', 0, 64) + " ms"
}

func (p *Page) diagnostics(stale bool) app.UI {
	var items []engine.Diagnostic
	if p.s.Result != nil {
		items = p.s.Result.Diagnostics
	}
	var extra []app.UI
	if p.s.RunErr != nil {
		extra = append(extra, app.P().Class("diag diag-error").Body(
			app.Span().Class("diag-icon").Aria("hidden", "true").Text("×"),
			app.Span().Class("diag-sev").Text("error: "),
			app.Text("The analysis failed: "+p.s.RunErr.Error()),
		))
	}
	if p.s.Result == nil {
		if len(extra) > 0 {
			return app.Div().Body(extra...)
		}
		return app.P().Class("muted").Text("Diagnostics appear here once the analysis has run.")
	}
	return app.Div().Body(append(extra, &Diagnostics{Items: items, Stale: stale})...)
}

func (p *Page) modesAndGrid(stale bool) app.UI {
	r := p.s.Result
	if r == nil {
		return app.P().Class("muted").Text("The modes and the grid appear here once the analysis has run.")
	}
	var box []string
	for i := range r.Params {
		if i < len(r.Grid.Lo) && i < len(r.Grid.Hi) && i < len(r.Grid.Points) {
			sc := resultScale(r, i)
			b := r.Params[i] + " ∈ [" + plot.FormatNumber(r.Grid.Lo[i], 4) + ", " +
				plot.FormatNumber(r.Grid.Hi[i], 4) + "], " + strconv.Itoa(r.Grid.Points[i]) + " points"
			if !sc.IsIdentity() {
				b += " on the " + sc.String() + " scale"
			}
			box = append(box, b)
		}
	}
	modes := r.Modes
	stages := make([]string, 0, len(r.Timing.Stages))
	for k := range r.Timing.Stages {
		stages = append(stages, k)
	}
	sort.Strings(stages)
	var st []string
	for _, k := range stages {
		st = append(st, stageName(k)+" "+fmtMillis(time.Duration(r.Timing.Stages[k]*float64(time.Millisecond))))
	}
	cls := "modes-grid"
	if stale {
		cls += " stale"
	}
	return app.Div().Class(cls).Body(
		&Modes{Params: r.Params, Items: modes},
		app.Dl().Class("facts").Body(
			app.Dt().Text("grid"), app.Dd().Text(strings.Join(box, "; ")),
			app.Dt().Text("mass in the edge layer"), app.Dd().Text(plot.FormatNumber(r.Grid.EdgeMass, 2)+" (largest over the faces)"),
			app.Dt().Text("grid points where log p is undefined"), app.Dd().Text(fmtPercent(r.Grid.NonFinite)),
			app.Dt().Text("log Z error estimate"), app.Dd().Text(fmtErr(r.Exact.LogZErr)+" (change from half resolution)"),
			app.Dt().Text("page time"), app.Dd().Text(fmtMillis(p.s.Elapsed)+" in all, working in slices of at most "+fmtMillis(p.s.LongestSlice)+
				" between pauses for the browser; figures "+fmtMillis(p.figTime)+", update of the page "+fmtMillis(p.drawTime)),
			app.Dt().Text("engine time"), app.Dd().Text(fmtMillis(time.Duration(r.Timing.Total*float64(time.Millisecond)))+
				app.FormatString(" (%s)", strings.Join(st, ", "))),
		),
	)
}

// Footer is the page's foot: the caution note and the language reference.
// It has no inputs, so go-app never renders it again after the first time.
type Footer struct {
	app.Compo
}

// Render draws the foot.
func (f *Footer) Render() app.UI {
	names := model.FuncNames()
	rows := make([]app.UI, 0, len(names))
	for _, n := range names {
		f := model.Funcs[n]
		rows = append(rows, app.Tr().Body(
			app.Td().Class("mono").Text(f.Name+"("+f.Args+")"),
			app.Td().Text(f.Doc),
		))
	}
	return app.Footer().Class("foot").Body(
		app.P().Class("caution").Body(
			app.Strong().Text("Caution. "),
			app.Text("Every number here is a numerical approximation, computed on a grid with the error estimates shown. "+
				"If a result feeds a consequential decision, check it with a full inference method."),
		),
		app.Details().Class("lang-ref").Body(
			app.Summary().Text("Model language"),
			app.Pre().Class("mono syntax").Text(
				"param NAME                 declare a parameter (fixes the order)\n"+
					"param NAME in [LO, HI]     ... with a support (LO may be -inf, HI inf)\n"+
					"NAME = EXPR                a constant, data vector or intermediate quantity\n"+
					"EXPR                       the log-density (natural log, up to a constant)\n"+
					"cost EXPR                  or the cost: the negative log-density\n"+
					"# comment                  one statement per line, or separated by ';'"),
			app.Div().Class("table-scroll").Body(app.Table().Class("funcs").Body(
				app.Caption().Class("sr-only").Text("Functions of the model language"),
				app.THead().Body(app.Tr().Body(app.Th().Scope("col").Text("function"), app.Th().Scope("col").Text("computes"))),
				app.TBody().Body(rows...),
			)),
		),
	)
}

// yielder lets the browser run between slices of work: Go compiled to
// WebAssembly runs on the page's only thread and is not preemptive, so a
// long computation must pause itself. A pause of a millisecond hands control
// to the browser's event loop (every goroutine is then blocked). It also
// measures the longest slice.
type yielder struct {
	every   time.Duration
	last    time.Time
	longest time.Duration
}

func newYielder(every time.Duration) *yielder {
	return &yielder{every: every, last: time.Now()}
}

// Yield pauses when the current slice has run for at least every.
func (y *yielder) Yield() {
	d := time.Since(y.last)
	if d < y.every {
		return
	}
	y.longest = max(y.longest, d)
	time.Sleep(time.Millisecond)
	y.last = time.Now()
}

// Longest returns the longest slice measured so far, including the one
// running now.
func (y *yielder) Longest() time.Duration {
	return max(y.longest, time.Since(y.last))
}
