package ui

import (
	"html"
	"strconv"
	"strings"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/export"
	"bellcheck/app/jsdom"
	"bellcheck/app/plot"
	"bellcheck/app/share"
)

// IDs of the share and export tools in the header.
const (
	CopyLinkID     = "bc-copy-link"    // button: copy a link to the current state
	EmbedMenuID    = "bc-embed-menu"   // details: the embed tools
	EmbedROID      = "bc-embed-ro"     // checkbox: the embed is read-only
	EmbedFoldID    = "bc-embed-fold"   // checkbox: the embed starts with the editor folded
	EmbedCodeID    = "bc-embed-code"   // read-only textarea: the iframe snippet
	CopyEmbedID    = "bc-copy-embed"   // button: copy the snippet
	ExportMenuID   = "bc-export-menu"  // details: the export tools
	ExportJSONID   = "bc-export-json"  // button: save the result as JSON
	ExportCSVID    = "bc-export-csv"   // button: save the result as CSV
	CopyMarkdownID = "bc-copy-md"      // button: copy the table as Markdown
	CopyLaTeXID    = "bc-copy-latex"   // button: copy the table as LaTeX
	ExportPlotID   = "bc-export-plot"  // select: the plot to save
	ExportSVGID    = "bc-export-svg"   // button: save the plot as SVG
	ExportPNGID    = "bc-export-png"   // button: save the plot as PNG
	ToolStatusID   = "bc-tool-status"  // status line of the tools
	CopyFieldID    = "bc-copy-field"   // read-only textarea offered when the clipboard is refused
	toolCloseID    = "bc-tool-dismiss" // button: hide the status line
)

// toolState is what the share and export tools show.
type toolState struct {
	// msg is the status line; warn marks a problem.
	msg  string
	warn bool
	// field is text offered for copying by hand when the browser refused
	// the clipboard ("" hides the field).
	field string
	// embedRO and embedFold are the options of the embed snippet;
	// embedOpen reports its menu open.
	embedRO, embedFold, embedOpen bool
	// embedPlot and embedMaxH are the embed's layout (embedlayout.go).
	embedPlot bool
	embedMaxH int
	// plot is the ID of the panel chosen for export ("" for the first).
	plot string
	// snippet and full keep the last embed snippet and full link made.
	snippet, full linkMemo
}

// EmbedHeight is the iframe's height in the snippet before the calculator
// reports its own.
const EmbedHeight = 720

// EmbedSnippet returns the HTML of an iframe showing the calculator at
// pageURL (the page's address without fragment) with the state st in the
// embed view. The data-bellcheck attribute marks it for the host page's
// resize script.
func EmbedSnippet(pageURL string, st share.State, readOnly, folded bool) (string, error) {
	st.View.Embed, st.View.ReadOnly, st.View.EditorCollapsed = true, readOnly, folded
	frag, err := share.Encode(st)
	if err != nil {
		return "", err
	}
	src := pageURL + "#" + frag
	return `<iframe data-bellcheck src="` + html.EscapeString(src) + `" title="bellcheck calculator" width="100%" height="` +
		itoa(snippetHeight(st.View.MaxHeight)) + `" style="border:0;max-width:100%" loading="lazy"></iframe>`, nil
}

// embedSnippet is the snippet for the current state; "" outside the
// browser, where the page's address is unknown (the pre-rendered page).
func (p *Page) embedSnippet() string {
	base := pageURL()
	if base == "" {
		return ""
	}
	st := p.shareState()
	st.View.PlotOnly, st.View.MaxHeight = p.tools.embedPlot, p.tools.embedMaxH
	return p.tools.snippet.get(stateKey(st, base, strconv.FormatBool(p.tools.embedRO), strconv.FormatBool(p.tools.embedFold)), func() string {
		s, err := EmbedSnippet(base, st, p.tools.embedRO, p.tools.embedFold)
		if err != nil {
			return "The model is too long to embed through a link."
		}
		return s
	})
}

// say sets the status line.
func (p *Page) say(msg string, warn bool) {
	p.tools.msg, p.tools.warn, p.tools.field = msg, warn, ""
}

// SetEmbedOptions implements ToolHost.
func (p *Page) SetEmbedOptions(ctx app.Context, readOnly, folded bool) {
	p.tools.embedRO, p.tools.embedFold = readOnly, folded
}

// OpenEmbedMenu implements ToolHost.
func (p *Page) OpenEmbedMenu(ctx app.Context, open bool) { p.tools.embedOpen = open }

// ChoosePlot implements ToolHost.
func (p *Page) ChoosePlot(ctx app.Context, id string) { p.tools.plot = id }

// DismissToolMessage implements ToolHost.
func (p *Page) DismissToolMessage(ctx app.Context) {
	p.tools.msg, p.tools.field, p.tools.warn = "", "", false
}

// exportChoices is what the export panel offers now.
func (p *Page) exportChoices() ExportChoices {
	c := ExportChoices{HasResult: p.s.Result != nil, HasTable: len(p.sections) > 0}
	for _, pn := range panelsOf(p.figs) {
		c.Plots = append(c.Plots, PlotChoice{ID: pn.ID, Label: panelLabel(pn)})
	}
	if pn := p.chosenPanel(); pn != nil {
		c.Chosen = pn.ID
	}
	return c
}

// CopyLink copies a link to the current state (in the full view).
func (p *Page) CopyLink(ctx app.Context) {
	p.copyText(ctx, p.fullLink(), "Link copied: it opens this model with its settings.")
}

// CopyEmbed copies the iframe snippet for the current state.
func (p *Page) CopyEmbed(ctx app.Context) {
	p.copyText(ctx, p.embedSnippet(), "Embed code copied: paste it into the page's HTML.")
}

// copyText writes text to the clipboard, or, when the browser refuses,
// shows it selected in a read-only field to copy by hand.
func (p *Page) copyText(ctx app.Context, text, done string) {
	jsdom.CopyText(text, func(err error) {
		ctx.Dispatch(func(ctx app.Context) { p.copied(ctx, text, done, err) })
	})
}

func (p *Page) copied(ctx app.Context, text, done string, err error) {
	if err == nil {
		p.say(done, false)
		return
	}
	p.tools.msg, p.tools.warn, p.tools.field = "The browser did not let bellcheck use the clipboard. The text is selected below: press Ctrl+C (⌘C on a Mac) to copy it.", true, text
	ctx.Defer(func(ctx app.Context) {
		if ok, _ := jsdom.SelectText(CopyFieldID); ok {
			ctx.Dispatch(func(ctx app.Context) {
				if p.tools.field == text {
					p.tools.msg, p.tools.warn = done+" (The text is also shown below.)", false
				}
			})
		}
	})
}

// staleNote is added to a message about an export of dimmed results.
func (p *Page) staleNote() string {
	if p.s.Stale() {
		return " These are the results shown, for the last valid model."
	}
	return ""
}

// ExportJSON saves the result as the command line's JSON.
func (p *Page) ExportJSON(ctx app.Context) {
	b, err := export.JSON(p.s.Result)
	p.save(filename(p, "", ".json"), "application/json", b, err, "the command line's JSON")
}

// ExportCSV saves the result as CSV.
func (p *Page) ExportCSV(ctx app.Context) {
	b, err := export.CSV(p.s.Result)
	p.save(filename(p, "", ".csv"), "text/csv;charset=utf-8", b, err, "one row per quantity and method")
}

func (p *Page) save(name, mime string, b []byte, err error, what string) {
	if err == nil {
		err = jsdom.Download(name, mime, b)
	}
	if err != nil {
		p.say("Could not save "+name+": "+err.Error(), true)
		return
	}
	p.say("Saved "+name+" ("+what+")."+p.staleNote(), false)
}

// filename names an export after the model's parameters.
func filename(p *Page, panel, ext string) string {
	name := "bellcheck"
	if panel != "" {
		return name + "-" + panel + ext
	}
	if r := p.s.Result; r != nil && len(r.Params) > 0 {
		name += "-" + strings.Join(r.Params, "-")
	}
	return name + ext
}

// ExportTable returns the results table in export form.
func ExportTable(sections []Section) export.Table {
	t := export.Table{Note: "Bold: the fit closest to the exact value in its row. In parentheses: the error estimate of an exact value, or a fit's deviation from it."}
	for _, m := range plot.Methods {
		t.Columns = append(t.Columns, plot.StyleOf(m).Name)
	}
	for _, sec := range sections {
		g := export.Group{Title: sec.Title}
		for _, r := range sec.Rows {
			row := export.Row{Label: r.Label}
			for _, m := range plot.Methods {
				c := r.Cells[m]
				row.Cells = append(row.Cells, export.Cell{Text: c.Text, Note: c.Sub, Best: c.Best})
			}
			g.Rows = append(g.Rows, row)
		}
		t.Groups = append(t.Groups, g)
	}
	return t
}

// CopyTable copies the results table as Markdown or LaTeX.
func (p *Page) CopyTable(ctx app.Context, latex bool) {
	if len(p.sections) == 0 {
		p.say("Nothing to copy yet: the analysis has not finished.", true)
		return
	}
	t := ExportTable(p.sections)
	// The two curvatures follow the table, where the result has them.
	ct, withCurv := export.CurvatureTable(p.s.Result)
	if latex {
		text := export.LaTeX(t)
		if withCurv {
			text += "\n" + export.LaTeX(ct)
		}
		p.copyText(ctx, text, "Table copied as a LaTeX tabular."+p.staleNote())
		return
	}
	text := export.Markdown(t)
	if withCurv {
		text += "\n" + export.Markdown(ct)
	}
	p.copyText(ctx, text, "Table copied as Markdown."+p.staleNote())
}

// panelsOf lists a figure set's panels in reading order.
func panelsOf(fs *FigureSet) []*Panel {
	if fs == nil {
		return nil
	}
	if fs.Main != nil {
		return []*Panel{fs.Main}
	}
	var out []*Panel
	for _, row := range fs.Grid {
		for _, pn := range row {
			if pn != nil && pn.Fig != nil {
				out = append(out, pn)
			}
		}
	}
	return out
}

// panelLabel names a panel in the plot menu.
func panelLabel(pn *Panel) string {
	if pn.J < 0 {
		return "marginal of " + name(pn.I, pn)
	}
	return name(pn.I, pn) + " and " + name(pn.J, pn)
}

// panelFile names a panel's file.
func panelFile(pn *Panel) string {
	if pn.J < 0 {
		return name(pn.I, pn)
	}
	return name(pn.I, pn) + "-" + name(pn.J, pn)
}

// chosenPanel returns the panel chosen for export (the first by default).
func (p *Page) chosenPanel() *Panel {
	panels := panelsOf(p.figs)
	for _, pn := range panels {
		if pn.ID == p.tools.plot {
			return pn
		}
	}
	if len(panels) > 0 {
		return panels[0]
	}
	return nil
}

// pngScale is how many PNG pixels a figure's unit gets.
const pngScale = 2

// ExportPlot saves the chosen plot as SVG or PNG.
func (p *Page) ExportPlot(ctx app.Context, png bool) {
	pn := p.chosenPanel()
	if pn == nil || pn.Fig == nil {
		p.say("There is no plot to save yet.", true)
		return
	}
	f := pn.Fig
	var heat *export.Raster
	note := ""
	if h := f.Heat; h != nil {
		if u, err := jsdom.CanvasDataURL(pn.ID + "-heat"); err == nil {
			heat = &export.Raster{DataURL: u, X: h.Box.X0, Y: h.Box.Y0, Width: h.Box.W(), Height: h.Box.H()}
		} else {
			note = " The heat map could not be read from the page, so the file has the contours only."
		}
	}
	svg, fw, fh, err := p.publicationFigure(pn, heat) // pubexport.go
	if err != nil {
		p.say("Could not save the plot: "+err.Error(), true)
		return
	}
	if !png {
		p.save(filename(p, panelFile(pn), ".svg"), "image/svg+xml", []byte(svg), nil, "SVG of "+panelLabel(pn))
		if note != "" {
			p.tools.msg += note
		}
		return
	}
	name := filename(p, panelFile(pn), ".png")
	w, h := int(fw*pngScale+0.5), int(fh*pngScale+0.5)
	p.say("Drawing "+name+"…", false)
	jsdom.DownloadPNG(name, svg, w, h, func(err error) {
		ctx.Dispatch(func(ctx app.Context) {
			if err != nil {
				p.say("Could not save "+name+": "+err.Error(), true)
				return
			}
			p.say("Saved "+name+" ("+itoa(w)+" × "+itoa(h)+" pixels, "+panelLabel(pn)+")."+note+p.staleNote(), false)
		})
	})
}

// openEmbedSnippet is the snippet while the embed menu is open, "" while
// it is closed (making it encodes the state, at every change of it).
func (p *Page) openEmbedSnippet() string {
	if !p.tools.embedOpen {
		return ""
	}
	return p.embedSnippet()
}
