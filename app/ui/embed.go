package ui

import (
	"strconv"
	"strings"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/jsdom"
	"bellcheck/app/share"
)

// Stable element IDs and attributes for scripts and tests.
const (
	// RootID is the page's outermost element; the embed view reports its
	// height to the parent page.
	RootID = "bc-root"
	// OutputID is the results area. Its data-state attribute says where the
	// analysis stands (see OutputState), data-gen the generation of the
	// newest requested analysis and data-result-gen that of the result
	// shown.
	OutputID = "bc-output"
	// EmbedToggleID folds and unfolds the embed view's editor;
	// EmbedEditorID is the part it folds; OpenFullID the link to the full
	// calculator.
	EmbedToggleID = "bc-embed-toggle"
	EmbedEditorID = "bc-embed-editor"
	OpenFullID    = "bc-open-full"
)

// States of the results area (its data-state attribute).
const (
	StateEmpty   = "empty"   // nothing analysed yet
	StatePending = "pending" // typing: the text is checked once typing pauses
	StateRunning = "running" // an analysis runs
	StateInvalid = "invalid" // the text has errors; an older result may show, dimmed
	StateError   = "error"   // the newest analysis failed
	StateReady   = "ready"   // the result shown is the answer for the text and options
)

// Mode is the page's view as a link chose it.
type Mode struct {
	// Embed selects the compact view for an iframe.
	Embed bool
	// ReadOnly shows the model without letting it be edited (embed view).
	ReadOnly bool
	// Folded starts the embed view with the editor folded away.
	Folded bool
}

// OutputState returns the results area's state, one of the State
// constants.
func (p *Page) OutputState() string {
	switch {
	case p.s.Running:
		return StateRunning
	case p.pending:
		return StatePending
	case p.s.Errors != nil:
		return StateInvalid
	case p.s.RunErr != nil:
		return StateError
	case p.s.Result != nil && !p.s.Stale():
		return StateReady
	}
	return StateEmpty
}

// output returns the results area's element with its state attributes.
func (p *Page) output(class string) app.HTMLSection {
	return app.Section().ID(OutputID).Class(class).Aria("label", "Results").
		Aria("busy", strconv.FormatBool(p.s.Running)).
		DataSet("state", p.OutputState()).
		DataSet("gen", p.s.Gen).
		DataSet("result-gen", p.s.ResultGen)
}

// embedLink reports whether a fragment is a valid link to the embed view.
func embedLink(frag string) bool {
	if frag == "" {
		return false
	}
	st, err := share.Decode(frag)
	return err == nil && st.View.Embed
}

// setMode takes the embed choices of a link's view.
func (p *Page) setMode(v share.View) {
	p.mode = Mode{Embed: true, ReadOnly: v.ReadOnly, Folded: v.EditorCollapsed}
	p.folded = v.EditorCollapsed
}

// openEmbedded opens the embed view from the link alone, without reading or
// writing the work saved in the browser. A broken link gives the notice and
// the default example, in the embed view.
func (p *Page) openEmbedded(ctx app.Context) {
	frag := p.browser.Fragment()
	if frag == "" {
		p.mode.Embed = true
		p.start(ctx)
		p.persist()
		return
	}
	st, err := share.Decode(frag)
	if err != nil {
		p.mode.Embed = true
		p.notice = Notice{Text: "The link could not be opened: " + linkProblem(err) + " The default example is shown instead.", Warn: true}
		p.start(ctx)
		p.persist()
		return
	}
	p.setMode(st.View)
	p.mode.Embed = true
	src, params, v := fromShare(st)
	p.initial = src
	p.LoadState(ctx, src, params, v)
}

// ToggleEditor folds or unfolds the embed view's editor.
func (p *Page) ToggleEditor(ctx app.Context) {
	p.folded = !p.folded
	p.afterRender(ctx)
}

// afterRender sends the embed view's new height once the page has been
// drawn (the ResizeObserver catches most changes; this catches a replaced
// root element).
func (p *Page) afterRender(ctx app.Context) {
	if !p.mode.Embed {
		return
	}
	ctx.Defer(func(app.Context) { _ = jsdom.ReportHeight(RootID) })
}

// fullLink is the link that opens the current state in the full
// calculator.
func (p *Page) fullLink() string {
	st := p.shareState()
	st.View.Embed, st.View.ReadOnly, st.View.EditorCollapsed = false, false, false
	frag, err := share.Encode(st)
	if err != nil {
		return pageURL()
	}
	return pageURL() + "#" + frag
}

// pageURL is the page's address without its fragment ("" natively, so
// links are relative to the page).
func pageURL() string {
	u, err := jsdom.PageURL()
	if err != nil {
		return ""
	}
	return u
}

// modelSummary names the model's parameters for the folded editor.
func (p *Page) modelSummary() string {
	m := p.s.Model
	if m == nil {
		m = p.s.LastGood
	}
	lines := strings.Count(strings.TrimRight(p.text, "\n"), "\n") + 1
	s := strconv.Itoa(lines) + " line"
	if lines != 1 {
		s += "s"
	}
	if m != nil && len(m.Params) > 0 {
		names := make([]string, len(m.Params))
		for i, prm := range m.Params {
			names[i] = prm.Name
		}
		s += "; parameters " + strings.Join(names, ", ")
	}
	return s
}

// renderEmbed draws the compact view for an iframe: a slim header, the
// model (foldable, perhaps read-only), the diagnostics, the plots and the
// results table.
func (p *Page) renderEmbed() app.UI {
	stale := p.s.Stale()
	ro := p.mode.ReadOnly
	label := "Hide the model"
	if p.folded {
		label = "Show the model"
	}
	return app.Div().ID(RootID).Class("page embed").Body(
		app.Header().Class("embed-top").Body(
			app.Div().Class("brand").Body(
				app.Raw(logoSVG),
				app.Span().Class("wordmark").Text("bellcheck"),
			),
			p.runStatus(),
			app.A().ID(OpenFullID).Class("open-full").Href(p.fullLink()).Target("_blank").Rel("noopener").
				Title("Open this model in the full calculator, in a new tab").Text("Open in bellcheck ↗"),
		),
		p.noticeBar(),
		app.Main().Class("embed-body").Body(
			app.Section().Class("card embed-model").Aria("labelledby", "bc-h-model").Body(
				app.Div().Class("embed-model-head").Body(
					app.H2().ID("bc-h-model").Text("Model"),
					app.Span().Class("muted embed-summary").Text(p.modelSummary()),
					app.If(ro, func() app.UI { return app.Span().Class("ro-badge").Text("read-only") }),
					app.Button().Type("button").ID(EmbedToggleID).Class("tool-btn fold-btn").
						Aria("expanded", strconv.FormatBool(!p.folded)).Aria("controls", EmbedEditorID).
						Text(label).OnClick(func(ctx app.Context, e app.Event) { p.ToggleEditor(ctx) }),
				),
				// Folding hides the editor rather than removing it, so it
				// keeps its text, caret and undo history.
				app.Div().ID(EmbedEditorID).Class("embed-editor").Hidden(p.folded).Body(
					&Editor{Host: p, Initial: p.initial, Text: p.text, Checked: p.s.Source, Errors: p.s.Errors, Pending: p.pending, ReadOnly: ro},
					app.If(!ro, func() app.UI {
						return app.Div().Class("embed-params").Body(
							app.H3().Class("embed-sub").Text("Parameters"),
							&ParamPanel{Host: p, Params: ParamViews(&p.s), Stale: p.s.Model == nil},
						)
					}),
				),
			),
			p.output("embed-output").Body(
				card("Diagnostics", "bc-h-diag", p.diagnostics(stale)),
				card("Plots", "bc-h-plots", &PlotPanel{Host: p, Set: p.figs, View: p.view, Stale: stale}),
				card("Results", "bc-h-results", &ResultsTable{Sections: p.sections, Stale: stale}),
			),
		),
		app.P().Class("embed-caution muted").Body(
			app.Strong().Text("Caution. "),
			app.Text("Numerical approximations on a grid, with the error estimates shown; check results that feed a consequential decision with a full inference method."),
		),
	)
}
