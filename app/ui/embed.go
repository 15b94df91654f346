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
	StateStopped = "stopped" // the user stopped the analysis; an older result may show, dimmed
)

// Mode is the page's view as a link chose it.
type Mode struct {
	// Embed selects the compact view for an iframe.
	Embed bool
	// ReadOnly shows the model without letting it be edited (embed view).
	ReadOnly bool
	// Folded starts the embed view with the editor folded away.
	Folded bool
	// PlotOnly shows the plots alone; MaxHeight caps the view's height
	// (0 for none; embedlayout.go).
	PlotOnly  bool
	MaxHeight int
}

// OutputState returns the results area's state, one of the State
// constants.
func (p *Page) OutputState() string {
	switch {
	case p.s.Running:
		return StateRunning
	case p.stopped && !p.pending:
		return StateStopped
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
	p.mode = Mode{Embed: true, ReadOnly: v.ReadOnly, Folded: v.EditorCollapsed, PlotOnly: v.PlotOnly, MaxHeight: v.MaxHeight}
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
	p.initial = st.Model
	p.loadLink(ctx, st)
	p.noticeLinkProblems(st)
}

// noticeLinkProblems says in the notice which of an embed link's settings
// were set back to their defaults (loadLink does so for every option the
// engine would refuse), as the full page does; no notice when there are
// none.
func (p *Page) noticeLinkProblems(st share.State) {
	if problems := LinkProblems(st); len(problems) > 0 {
		p.notice = linkNotice(Notice{}, problems)
	}
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
	base := pageURL()
	return p.tools.full.get(stateKey(st, base), func() string {
		frag, err := share.Encode(st)
		if err != nil {
			return base
		}
		return base + "#" + frag
	})
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

// renderEmbed draws the compact view for an iframe.
func (p *Page) renderEmbed() app.UI {
	if p.mode.PlotOnly {
		return p.renderPlotOnly() // embedlayout.go
	}
	return &EmbedView{Host: p, MaxHeight: p.mode.MaxHeight, ReadOnly: p.mode.ReadOnly, Folded: p.folded, Summary: p.modelSummary(),
		FullLink: p.fullLink(), Run: p.runState(), Notice: p.notice, Model: p.modelInput(), Out: p.resultView()}
}

// EmbedHost is what the embed view reports to: the page implements it.
type EmbedHost interface {
	Host
	NoticeHost
	StopHost
	// ToggleEditor folds or unfolds the editor.
	ToggleEditor(ctx app.Context)
}

// EmbedView is the compact view for an iframe: a slim header, the model
// (foldable, perhaps read-only), the diagnostics, the plots and the results
// table.
type EmbedView struct {
	app.Compo
	Host EmbedHost
	// ReadOnly shows the model without letting it be edited; Folded hides
	// the editor, and Summary describes the model in its place.
	ReadOnly, Folded bool
	Summary          string
	// MaxHeight caps the view's height (0 for none).
	MaxHeight int
	// FullLink opens the state in the full calculator.
	FullLink string
	Run      RunState
	Notice   Notice
	Model    ModelInput
	Out      ResultView
}

// Render draws the view.
func (v *EmbedView) Render() app.UI {
	ro := v.ReadOnly
	label := "Hide the model"
	if v.Folded {
		label = "Show the model"
	}
	ed := v.Model.editor(v.Host)
	ed.ReadOnly = ro
	return capHeight(app.Div().ID(RootID).Class("page embed"), v.MaxHeight).Body(
		app.Header().Class("embed-top").Body(
			app.Div().Class("brand").Body(
				app.Raw(logoSVG),
				app.Span().Class("wordmark").Text("bellcheck"),
			),
			&RunStatus{Host: v.Host, Run: v.Run},
			app.A().ID(OpenFullID).Class("open-full").Href(v.FullLink).Target("_blank").Rel("noopener").
				Title("Open this model in the full calculator, in a new tab").Text("Open in bellcheck ↗"),
		),
		&NoticeBar{Host: v.Host, Notice: v.Notice},
		app.Main().Class("embed-body").Body(
			app.Section().Class("card embed-model").Aria("labelledby", "bc-h-model").Body(
				app.Div().Class("embed-model-head").Body(
					app.H2().ID("bc-h-model").Text("Model"),
					app.Span().Class("muted embed-summary").Text(v.Summary),
					app.If(ro, func() app.UI { return app.Span().Class("ro-badge").Text("read-only") }),
					app.Button().Type("button").ID(EmbedToggleID).Class("tool-btn fold-btn").
						Aria("expanded", strconv.FormatBool(!v.Folded)).Aria("controls", EmbedEditorID).
						Text(label).OnClick(func(ctx app.Context, e app.Event) { v.Host.ToggleEditor(ctx) }),
				),
				// Folding hides the editor rather than removing it, so it
				// keeps its text, caret and undo history.
				app.Div().ID(EmbedEditorID).Class("embed-editor").Hidden(v.Folded).Body(
					ed,
					app.If(!ro, func() app.UI {
						return app.Div().Class("embed-params").Body(
							app.H3().Class("embed-sub").Text("Parameters"),
							v.Model.params(v.Host),
						)
					}),
				),
			),
			&Outputs{Host: v.Host, Class: "embed-output", Out: v.Out},
		),
		app.P().Class("embed-caution muted").Body(
			app.Strong().Text("Caution. "),
			app.Text("Numerical approximations on a grid, with the error estimates shown; check results that feed a consequential decision with a full inference method."),
		),
	)
}
