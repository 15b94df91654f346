package ui

import (
	"maps"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/examples"
	"bellcheck/app/jsdom"
	"bellcheck/app/plot"
	"bellcheck/app/share"
	"bellcheck/engine"
	"bellcheck/engine/model"
)

// Page is the calculator: editor, parameters and gallery on one side,
// diagnostics, plots and the results table on the other.
type Page struct {
	app.Compo
	// runner runs the analyses (runner.go).
	runner

	s       Session
	initial string // the editor's text when the page was built
	text    string // the editor's current text
	editSeq int
	// persistSeq numbers the requests to persist the state (persistSoon);
	// persistPending reports one not yet carried out.
	persistSeq     int
	persistPending bool
	// urlFrag is the URL's fragment as the page last wrote or opened it
	// (urlKnown once it has): a different one in the URL is a link set from
	// outside whose hashchange is still to come, which persist leaves be.
	urlFrag  string
	urlKnown bool
	pending  bool
	example  string
	view     View
	figs     *FigureSet
	sections []Section
	// lastShown is the result as last shown (see shown).
	lastShown *Shown

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
	// data is the attached table's source and stored form (datapanel.go).
	data attached
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
	p.s.SetChoices(ex.Params)
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
	_ = jsdom.OnLeave(p.flushPending) // persist.go
	p.open(ctx)
	if !p.mode.Embed {
		p.watchDrops(ctx)
	}
	p.afterRender(ctx)
}

// open loads what Opening chooses and analyses it. An embed link, and any
// page inside a frame, opens the link alone: the browser's saved work
// belongs to the calculator opened on its own, and embeds on a wiki page
// must neither read nor overwrite it.
func (p *Page) open(ctx app.Context) {
	p.urlFrag, p.urlKnown = p.browser.Fragment(), true
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
	p.initial = st.Model
	p.loadLink(ctx, st)
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
	p.urlFrag, p.urlKnown = frag, true
	link, err := share.Decode(frag)
	if err != nil {
		p.notice = Notice{Text: "The link could not be opened: " + linkProblem(err) + " Your model is unchanged.", Warn: true}
		p.persist() // put the current state back into the URL
		return
	}
	if p.mode.Embed {
		cur := p.shareState()
		if cur.Model == link.Model && cur.View == link.View && maps.Equal(cur.Constants, link.Constants) {
			return
		}
		p.setMode(link.View)
		p.loadLink(ctx, link)
		p.noticeLinkProblems(link) // embed.go
		return
	}
	cur := p.shareState()
	if cur.Model == link.Model && maps.Equal(cur.Constants, link.Constants) {
		return
	}
	p.loadLink(ctx, link)
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
	p.loadLink(ctx, *offer)
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
	st := toShare(p.text, m, p.s.Choices(m), p.view)
	st.Data = p.linkData()
	if st.Data == "" && p.data.csv != "" {
		st.DataLeft = p.data.digest // too large for a link: named, kept in the saved work
	}
	st.Constants = p.s.movedConstants()
	st.View.Embed, st.View.ReadOnly, st.View.EditorCollapsed = p.mode.Embed, p.mode.ReadOnly, p.mode.Folded
	st.View.PlotOnly, st.View.MaxHeight = p.mode.PlotOnly, p.mode.MaxHeight
	return st
}

// persist saves the current state in local storage and in the URL, so a
// reload restores it and the address bar always holds a link to it.
func (p *Page) persist() {
	p.persistPending = false
	if p.browser == nil {
		return
	}
	frag, err := share.Encode(p.shareState())
	if err != nil {
		return // too long for a link: the text stays in the editor only
	}
	if !p.mode.Embed {
		p.record(p.shareState(), frag) // storage refused: the state stays in the URL
	}
	if p.urlKnown && p.browser.Fragment() != p.urlFrag {
		// A link set from outside (pasted, or set by a script) just now:
		// its hashchange opens it; writing the current state over it
		// would lose it (the hashchange would then find the page's own
		// state). The current state is in the history already.
		return
	}
	p.browser.SetFragment(frag)
	p.urlFrag, p.urlKnown = frag, true
}

// persistSoon persists the state PersistDelay from now, once for a burst
// of checks: encoding the state and writing it to the URL and the storage
// take longer than a small analysis, so after a keystroke they wait until
// its result is drawn. (Other changes, rarer, persist at once.)
func (p *Page) persistSoon(ctx app.Context) {
	if p.ctx != nil {
		ctx = *p.ctx
	}
	p.persistSeq++
	p.persistPending = true
	seq := p.persistSeq
	ctx.After(PersistDelay, func(ctx app.Context) {
		if seq != p.persistSeq {
			// A later change waits for its own turn. Nothing changed: no
			// render of the page (a slider's drag asks for a save at every
			// input, and each render took the page's thread for 10 ms and
			// more).
			ctx.PreventUpdate()
			return
		}
		p.persist()
	})
}

// keepPending writes a change still waiting for its PersistDelay to the
// history at once (not to the URL, which may already hold a link being
// opened), so that opening a link, an example or another kept model right
// after typing loses nothing.
func (p *Page) keepPending() {
	if !p.persistPending || p.browser == nil || p.mode.Embed {
		return
	}
	p.persistPending = false
	st := p.shareState()
	if frag, err := share.Encode(st); err == nil {
		p.record(st, frag)
	}
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
		if seq != p.editSeq {
			ctx.PreventUpdate() // a later keystroke's check follows; nothing changed
			return
		}
		p.check(ctx)
	})
}

// check checks the editor's text and starts an analysis when it is valid;
// while it is not, a running analysis stops and the last results stay
// shown, dimmed.
func (p *Page) check(ctx app.Context) {
	p.pending = false
	p.checked(ctx, p.s.Edit(p.text))
}

// checked saves the state of a text just checked and analyses it when it
// is valid.
func (p *Page) checked(ctx app.Context, valid bool) {
	p.persistSoon(ctx)
	p.syncParamFields(ctx)
	if valid {
		p.start(ctx)
		return
	}
	p.stop()
}

// SetParam implements Host.
func (p *Page) SetParam(ctx app.Context, name string, o engine.ParamOptions) {
	p.s.SetParam(name, o)
	p.persist()
	p.syncParamFields(ctx)
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
	p.setData(nil, "")
	p.LoadState(ctx, ex.Source, ex.Params, p.view)
	p.example = ex.ID
}

// LoadState replaces the whole calculator state (model text, options by
// parameter name, view) and analyses it: for examples, and for restoring a
// shared link or saved work.
func (p *Page) LoadState(ctx app.Context, src string, params ParamChoices, v View) {
	p.load(src, v)
	p.s.SetChoices(params)
	p.checked(ctx, p.s.Edit(src))
}

// loadLink replaces the whole calculator state by a link's. The link keeps
// options by parameter index: the text is parsed once, and its parameters
// name them.
func (p *Page) loadLink(ctx app.Context, st share.State) {
	p.load(st.Model, View{Log: st.View.LogScale})
	p.openData(st)
	valid := p.s.Edit(st.Model)
	p.s.restoreConstants(st.Constants)
	// An option the engine would refuse is set back to its default
	// (LinkProblems says which, for the notice).
	params := usableOptions(p.s.Model, st.Params)
	if st.AsIsDefault {
		params = p.s.asIsWhereUnnamed(params)
	}
	p.s.SetChoices(ChoicesOf(p.s.Model, params))
	p.checked(ctx, valid)
}

// load puts a new text into the editor and takes the view.
func (p *Page) load(src string, v View) {
	p.keepPending()
	p.editSeq++ // drop a pending check of the old text
	p.pending = false
	p.text, p.example = src, ""
	_ = jsdom.SetValue(EditorID, src) // natively there is no editor to set
	p.view = v
	if p.browser != nil && !p.mode.Embed {
		p.hist().Loaded()
	}
}

// State returns the calculator state to save or share: the editor's text,
// the options of the current model's parameters by name, and the view.
func (p *Page) State() (src string, params ParamChoices, v View) {
	m := p.s.Model
	if m == nil {
		m = p.s.LastGood
	}
	return p.text, p.s.Choices(m), p.view
}

// SetView implements Host.
func (p *Page) SetView(ctx app.Context, log bool, hidden [plot.NumMethods]bool) {
	p.view = View{Log: log, Hidden: hidden, Hold: p.view.Hold, Pin: p.view.Pin}
	p.figs = numbered(BuildFigures(p.s.Result, p.view))
	p.persist()
}

// Render draws the page: the full calculator, or the compact embed view.
func (p *Page) Render() app.UI {
	if p.mode.Embed {
		return p.renderEmbed()
	}
	in := p.modelInput()
	return app.Div().ID(RootID).Class("page").Body(
		app.Header().Class("top").Body(
			app.Div().Class("brand").Body(
				app.Raw(logoSVG),
				app.Span().Class("wordmark").Text("bellcheck"),
				app.Span().Class("tagline").Text("the exact posterior beside its Gaussian approximations"),
			),
			app.Div().Class("top-right").Body(
				&RunStatus{Host: p, Run: p.runState()},
				&Toolbar{Host: p, EmbedReadOnly: p.tools.embedRO, EmbedFolded: p.tools.embedFold,
					EmbedCode: p.openEmbedSnippet(), Export: p.exportChoices(), Layout: p.embedLayoutPanel()},
			),
		),
		&ToolTray{Host: p, Message: p.tools.msg, Field: p.tools.field, Warn: p.tools.warn},
		&NoticeBar{Host: p, Notice: p.notice},
		app.Main().Class("layout").Body(
			app.Section().Class("col-input").Aria("label", "Model and settings").Body(
				card("Model", "bc-h-model", in.editor(p)),
				p.liveCard(),
				card("Data", "bc-h-data", &DataPanel{Host: p, View: p.dataView()}),
				card("Parameters", "bc-h-params", in.params(p)),
				card("Examples", "bc-h-examples", &Gallery{Host: p, Current: p.example}),
				p.historyCard(),
			),
			&Outputs{Host: p, Class: "col-output", Out: p.resultView(), Modes: true, Times: p.pageTimes()},
		),
		&Footer{},
	)
}

// runState is where the analysis stands.
func (p *Page) runState() RunState {
	return RunState{
		Running: p.s.Running, ShowProgress: p.progress, Fraction: p.s.Progress.Fraction, Stage: p.s.Progress.Stage,
		Pending: p.pending, Invalid: p.s.Errors != nil, Failed: p.s.RunErr != nil,
		HasResult: p.s.Result != nil, Elapsed: p.s.Elapsed,
		Stopped: p.stopped, StoppedAfter: p.stoppedAfter,
	}
}

// resultView is what the results area shows.
func (p *Page) resultView() ResultView {
	return ResultView{
		State: p.OutputState(), Gen: p.s.Gen, ResultGen: p.s.ResultGen, Busy: p.s.Running,
		Shown: p.shown(), RunErr: p.s.RunErr, Stale: p.dimmed(), View: p.view,
	}
}

// dimmed reports whether the result shown is drawn dimmed: it is stale (see
// Session.Stale), and not only because an analysis runs that has not yet
// run for ProgressDelay. A quick analysis thus never dims and undims the
// results (each of which repaints the whole results area), while the state
// attributes of the results area say at once that the result is outdated.
func (p *Page) dimmed() bool {
	return p.s.Stale() && (!p.s.Running || p.progress || p.s.Errors != nil)
}

// pageTimes are the page's timings of the last result.
func (p *Page) pageTimes() PageTimes {
	return PageTimes{Elapsed: p.s.Elapsed, Longest: p.s.LongestSlice, Figures: p.figTime, Update: p.drawTime}
}

// ModelInput is what the model's editor and parameter panel show.
type ModelInput struct {
	// Initial is the editor's first text, Text its current one; Checked
	// is the text last checked and Errors its problems; Pending reports a
	// check due.
	Initial, Text, Checked string
	Errors                 model.ErrorList
	Pending                bool
	// Params are the parameters with their options; ParamsStale dims
	// them while the text has errors.
	Params      []ParamView
	ParamsStale bool
}

// modelInput is what the editor and the parameter panel show now.
func (p *Page) modelInput() ModelInput {
	return ModelInput{Initial: p.initial, Text: p.text, Checked: p.s.Source, Errors: p.s.Errors, Pending: p.pending,
		Params: ParamViews(&p.s), ParamsStale: p.s.Model == nil}
}

// editor is the model editor for in.
func (in ModelInput) editor(h Host) *Editor {
	return &Editor{Host: h, Initial: in.Initial, Text: in.Text, Checked: in.Checked, Errors: in.Errors, Pending: in.Pending}
}

// params is the parameter panel for in.
func (in ModelInput) params(h Host) *ParamPanel {
	return &ParamPanel{Host: h, Params: in.Params, Stale: in.ParamsStale}
}

// logoSVG is the page's mark: a bell curve and its dashed Gaussian double.
// It is a constant: no text from outside reaches app.Raw.
const logoSVG = `<svg class="logo" viewBox="0 0 32 32" width="26" height="26" aria-hidden="true" focusable="false"><path d="M2 27 C8 27 10 6 16 6 C22 6 24 27 30 27" fill="none" stroke="#1d3b53" stroke-width="2.4"/><path d="M4 27 C9 27 11 11 16 11 C21 11 23 27 28 27" fill="none" stroke="#c36121" stroke-width="1.6" stroke-dasharray="3 2"/></svg>`

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
			app.Text("Every number here is a numerical approximation, computed by quadrature with the error estimates shown. "+
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
