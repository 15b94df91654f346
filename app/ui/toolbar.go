package ui

import (
	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/jsdom"
)

// ToolHost is what the share and export tools report to: the page
// implements it.
type ToolHost interface {
	// CopyLink copies a link to the current state.
	CopyLink(ctx app.Context)
	// CopyEmbed copies the iframe snippet.
	CopyEmbed(ctx app.Context)
	// SetEmbedOptions sets the snippet's options.
	SetEmbedOptions(ctx app.Context, readOnly, folded bool)
	// OpenEmbedMenu reports the embed menu opened or closed (the snippet
	// is made only while it is open).
	OpenEmbedMenu(ctx app.Context, open bool)
	// ExportJSON and ExportCSV save the result.
	ExportJSON(ctx app.Context)
	ExportCSV(ctx app.Context)
	// CopyTable copies the results table as Markdown or LaTeX.
	CopyTable(ctx app.Context, latex bool)
	// ChoosePlot chooses the plot to export by its panel's ID.
	ChoosePlot(ctx app.Context, id string)
	// ExportPlot saves the chosen plot as SVG or PNG.
	ExportPlot(ctx app.Context, png bool)
	// DismissToolMessage hides the tools' status line.
	DismissToolMessage(ctx app.Context)
}

// PlotChoice is a plot offered for export.
type PlotChoice struct {
	ID, Label string
}

// ExportChoices is what the export panel offers.
type ExportChoices struct {
	// HasResult enables the result's files, HasTable the table's copies.
	HasResult, HasTable bool
	// Plots are the plots to export and Chosen the ID of the chosen one
	// ("" when there is none).
	Plots  []PlotChoice
	Chosen string
}

// Toolbar is the header's share and export tools.
type Toolbar struct {
	app.Compo
	Host ToolHost
	// EmbedReadOnly and EmbedFolded are the embed snippet's options;
	// EmbedCode the snippet ("" while the menu is closed).
	EmbedReadOnly, EmbedFolded bool
	// Layout is the embed's layout options (embedlayout.go).
	Layout    app.UI
	EmbedCode string
	Export    ExportChoices
}

// Render draws the link button and the embed and export menus.
func (t *Toolbar) Render() app.UI {
	return app.Div().Class("tools").Body(
		app.Button().Type("button").ID(CopyLinkID).Class("tool-btn").
			Title("Copy a link that opens this model with its settings").Text("Copy link").
			OnClick(func(ctx app.Context, e app.Event) { t.Host.CopyLink(ctx) }),
		app.Details().ID(EmbedMenuID).Class("menu").
			OnToggle(func(ctx app.Context, e app.Event) {
				if open := e.Get("target").Get("open"); open.Type() == app.TypeBoolean {
					t.Host.OpenEmbedMenu(ctx, open.Bool())
				}
			}).Body(
			app.Summary().Class("tool-btn").Title("Show this calculator live in a wiki or web page").Text("Embed"),
			app.Div().Class("menu-panel").Body(
				app.P().Class("menu-lead").Text("Paste this code into a wiki or web page to show this model there as a live calculator."),
				app.Label().Class("menu-check").For(EmbedROID).Body(
					app.Input().Type("checkbox").ID(EmbedROID).Checked(t.EmbedReadOnly).
						OnChange(func(ctx app.Context, e app.Event) {
							if on, err := jsdom.Checked(EmbedROID); err == nil {
								t.Host.SetEmbedOptions(ctx, on, t.EmbedFolded)
							}
						}),
					app.Span().Text("read-only: readers see the model but cannot edit it"),
				),
				app.Label().Class("menu-check").For(EmbedFoldID).Body(
					app.Input().Type("checkbox").ID(EmbedFoldID).Checked(t.EmbedFolded).
						OnChange(func(ctx app.Context, e app.Event) {
							if on, err := jsdom.Checked(EmbedFoldID); err == nil {
								t.Host.SetEmbedOptions(ctx, t.EmbedReadOnly, on)
							}
						}),
					app.Span().Text("start with the model folded away"),
				),
				t.Layout,
				app.Label().Class("sr-only").For(EmbedCodeID).Text("Embed code"),
				app.Textarea().ID(EmbedCodeID).Class("code-field").ReadOnly(true).Rows(4).
					Attr("spellcheck", "false").Text(t.EmbedCode),
				app.Div().Class("menu-row").Body(
					app.Button().Type("button").ID(CopyEmbedID).Class("tool-btn primary").Text("Copy embed code").
						OnClick(func(ctx app.Context, e app.Event) { t.Host.CopyEmbed(ctx) }),
				),
				app.P().Class("menu-note").Body(
					app.Text("The frame takes the height of its content when the host page runs the small resize script of the "),
					app.A().Href("web/embed-example.html").Target("_blank").Rel("noopener").Text("example host page"),
					app.Text(". Embeds never touch the work saved in this browser."),
				),
			),
		),
		app.Details().ID(ExportMenuID).Class("menu").Body(
			app.Summary().Class("tool-btn").Title("Save the results, the table or a plot").Text("Export"),
			&ExportPanel{Host: t.Host, Choices: t.Export},
		),
	)
}

// ExportPanel is the export menu: the result's files, the table's copies
// and the plot's files.
type ExportPanel struct {
	app.Compo
	Host    ToolHost
	Choices ExportChoices
}

// Render draws the panel.
func (x *ExportPanel) Render() app.UI {
	c := x.Choices
	none := !c.HasResult
	opts := make([]app.UI, len(c.Plots))
	for i, pl := range c.Plots {
		opts[i] = app.Option().Value(pl.ID).Selected(pl.ID == c.Chosen).Text(pl.Label)
	}
	noPlot := c.Chosen == ""
	return app.Div().Class("menu-panel").Body(
		app.Div().Class("menu-group").Body(
			app.Span().Class("menu-label").Text("Results"),
			app.Div().Class("menu-row").Body(
				app.Button().Type("button").ID(ExportJSONID).Class("tool-btn").Disabled(none).Text("Save JSON").
					Title("The command line's JSON (bellcheck fit --json)").
					OnClick(func(ctx app.Context, e app.Event) { x.Host.ExportJSON(ctx) }),
				app.Button().Type("button").ID(ExportCSVID).Class("tool-btn").Disabled(none).Text("Save CSV").
					Title("One row per quantity and method").
					OnClick(func(ctx app.Context, e app.Event) { x.Host.ExportCSV(ctx) }),
			),
		),
		app.Div().Class("menu-group").Body(
			app.Span().Class("menu-label").Text("Table"),
			app.Div().Class("menu-row").Body(
				app.Button().Type("button").ID(CopyMarkdownID).Class("tool-btn").Disabled(!c.HasTable).Text("Copy Markdown").
					OnClick(func(ctx app.Context, e app.Event) { x.Host.CopyTable(ctx, false) }),
				app.Button().Type("button").ID(CopyLaTeXID).Class("tool-btn").Disabled(!c.HasTable).Text("Copy LaTeX").
					Title("A tabular environment").
					OnClick(func(ctx app.Context, e app.Event) { x.Host.CopyTable(ctx, true) }),
			),
		),
		app.Div().Class("menu-group").Body(
			app.Label().Class("menu-label").For(ExportPlotID).Text("Plot"),
			app.Select().ID(ExportPlotID).Class("menu-select").Disabled(noPlot).
				OnChange(func(ctx app.Context, e app.Event) {
					if v, err := jsdom.Value(ExportPlotID); err == nil {
						x.Host.ChoosePlot(ctx, v)
					}
				}).Body(opts...),
			app.Div().Class("menu-row").Body(
				app.Button().Type("button").ID(ExportSVGID).Class("tool-btn").Disabled(noPlot).Text("Save SVG").
					OnClick(func(ctx app.Context, e app.Event) { x.Host.ExportPlot(ctx, false) }),
				app.Button().Type("button").ID(ExportPNGID).Class("tool-btn").Disabled(noPlot).Text("Save PNG").
					OnClick(func(ctx app.Context, e app.Event) { x.Host.ExportPlot(ctx, true) }),
			),
		),
		app.P().Class("menu-note").Text("The files hold the results shown; the README lists the CSV's columns."),
	)
}

// ToolTray is the tools' status line, with the text to copy by hand when
// the browser refused the clipboard.
type ToolTray struct {
	app.Compo
	Host ToolHost
	// Message is the status line, Warn marks a problem, and Field is the
	// text offered for copying by hand ("" hides the field).
	Message, Field string
	Warn           bool
}

// Render draws the status line.
func (t *ToolTray) Render() app.UI {
	tray := app.Div().ID(ToolStatusID).Class("tool-tray").Attr("role", "status").Aria("live", "polite")
	if t.Message == "" {
		return tray
	}
	cls := "tool-msg"
	if t.Warn {
		cls += " tool-warn"
	}
	return tray.Body(
		app.Div().Class(cls).Body(
			app.Span().Class("tool-text").Text(t.Message),
			app.Button().Type("button").ID(toolCloseID).Class("notice-close").Aria("label", "dismiss this message").Text("×").
				OnClick(func(ctx app.Context, e app.Event) { t.Host.DismissToolMessage(ctx) }),
		),
		app.If(t.Field != "", func() app.UI {
			return app.Textarea().ID(CopyFieldID).Class("code-field").ReadOnly(true).Rows(3).
				Attr("spellcheck", "false").Aria("label", "Text to copy").Text(t.Field)
		}),
	)
}
