package ui

import (
	"strconv"
	"strings"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/jsdom"
	"bellcheck/app/share"
)

// Element ids of the embed's layout options.
const (
	EmbedPlotID = "bc-embed-plot" // checkbox: the embed shows the plots alone
	EmbedMaxHID = "bc-embed-maxh" // number: the embed's height cap in pixels
)

// snippetHeight is the iframe's initial height: EmbedHeight, or the cap
// when it is lower.
func snippetHeight(maxH int) int {
	if maxH > 0 && maxH < EmbedHeight {
		return maxH
	}
	return EmbedHeight
}

// capHeight caps an embed view's root at maxH pixels (0 for no cap); the
// view then scrolls within, and the height it reports to the host page is
// at most the cap.
func capHeight(root app.HTMLDiv, maxH int) app.HTMLDiv {
	if maxH <= 0 {
		return root
	}
	return root.Style("max-height", strconv.Itoa(maxH)+"px").Style("overflow-y", "auto").
		Style("--bc-maxh", strconv.Itoa(maxH)+"px")
}

// renderPlotOnly is the embed view with the plots alone: for a figure in
// a wiki page, with a link to the full calculator under it.
func (p *Page) renderPlotOnly() app.UI {
	out := p.resultView()
	var figs *FigureSet
	if out.Shown != nil {
		figs = out.Shown.Figures
	}
	return capHeight(app.Div().ID(RootID).Class("page embed plot-only"), p.mode.MaxHeight).Body(
		app.Section().ID(OutputID).Class("embed-output").Aria("label", "Plots").
			Aria("busy", strconv.FormatBool(out.Busy)).DataSet("state", out.State).
			DataSet("gen", out.Gen).DataSet("result-gen", out.ResultGen).Body(
			&PlotPanel{Host: p, Set: figs, View: out.View, Stale: out.Stale, Computing: out.Busy && !out.Stale},
		),
		app.P().Class("embed-caution muted").Body(
			app.A().ID(OpenFullID).Class("open-full").Href(p.fullLink()).Target("_blank").Rel("noopener").
				Text("Open in bellcheck ↗"),
			app.Text(" Numerical approximations on a grid; check results that feed a consequential decision with a full inference method."),
		),
	)
}

// EmbedLayoutHost is what the embed layout options report to.
type EmbedLayoutHost interface {
	// SetEmbedLayout sets the snippet's layout: the plots alone, and a cap
	// on its height in pixels (0 for none).
	SetEmbedLayout(ctx app.Context, plotOnly bool, maxHeight int)
}

// EmbedLayoutPanel is the embed menu's layout options.
type EmbedLayoutPanel struct {
	app.Compo
	Host      EmbedLayoutHost
	PlotOnly  bool
	MaxHeight int
}

// Render draws the two options.
func (e *EmbedLayoutPanel) Render() app.UI {
	maxH := ""
	if e.MaxHeight > 0 {
		maxH = strconv.Itoa(e.MaxHeight)
	}
	return app.Div().Class("embed-layout").Body(
		app.Label().Class("menu-check").For(EmbedPlotID).Body(
			app.Input().Type("checkbox").ID(EmbedPlotID).Checked(e.PlotOnly).
				OnChange(func(ctx app.Context, ev app.Event) {
					if on, err := jsdom.Checked(EmbedPlotID); err == nil {
						e.Host.SetEmbedLayout(ctx, on, e.MaxHeight)
					}
				}),
			app.Span().Text("plots only: the figure without the model, the table or the diagnostics"),
		),
		app.Label().Class("menu-check").For(EmbedMaxHID).Body(
			app.Span().Text("height at most "),
			app.Input().Type("number").ID(EmbedMaxHID).Class("num-input embed-maxh").
				Min(share.MinEmbedHeight).Max(share.MaxEmbedHeight).Step(10).Placeholder("no cap").Value(maxH).
				OnChange(func(ctx app.Context, ev app.Event) {
					raw, err := jsdom.Value(EmbedMaxHID)
					if err != nil {
						return
					}
					n, err := strconv.Atoi(strings.TrimSpace(raw))
					if err != nil || n <= 0 {
						n = 0
					}
					if n != 0 {
						n = max(share.MinEmbedHeight, min(n, share.MaxEmbedHeight))
					}
					e.Host.SetEmbedLayout(ctx, e.PlotOnly, n)
				}),
			app.Span().Text(" pixels (it scrolls within)"),
		),
	)
}

// embedLayoutPanel is the layout options as chosen now.
func (p *Page) embedLayoutPanel() app.UI {
	return &EmbedLayoutPanel{Host: p, PlotOnly: p.tools.embedPlot, MaxHeight: p.tools.embedMaxH}
}

// SetEmbedLayout implements EmbedLayoutHost.
func (p *Page) SetEmbedLayout(ctx app.Context, plotOnly bool, maxHeight int) {
	p.tools.embedPlot, p.tools.embedMaxH = plotOnly, maxHeight
}
