package ui

import (
	"slices"
	"strconv"
	"strings"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/plot"
	"bellcheck/engine"
)

// swatch is a short line sample in a method's colour and dash, the same as
// in the plots.
func swatch(m plot.Method) app.UI { return swatchOf(plot.StyleOf(m)) }

// swatchOf is a short line sample in a style: the page's fixed styles only
// (their colours and dashes are constants; the name is not used).
func swatchOf(s plot.Style) app.UI {
	dash := ""
	if s.Dash != "" {
		dash = ` stroke-dasharray="` + s.Dash + `"`
	}
	return app.Raw(`<svg class="swatch" viewBox="0 0 28 8" width="28" height="8" aria-hidden="true" focusable="false"><line x1="1" y1="4" x2="27" y2="4" stroke="` +
		s.Colour + `" stroke-width="` + strconv.FormatFloat(s.Width*1.1, 'f', 2, 64) + `"` + dash + `/></svg>`)
}

// ResultsTable shows the exact density and each fit side by side.
type ResultsTable struct {
	app.Compo
	Sections []Section
	// Candidates names the user's candidate Gaussians: a column each,
	// after the fits (Row.Cands).
	Candidates []string
	// Stale dims the table when it belongs to an older model.
	Stale bool
}

// Render draws the table.
func (t *ResultsTable) Render() app.UI {
	if len(t.Sections) == 0 {
		return app.P().Class("muted").Text("Results appear here once the analysis has run.")
	}
	head := []app.UI{app.Th().Scope("col").Class("rlabel").Text("")}
	// The candidates come right after the exact column (a derivation is
	// checked against the exact density first), then the fits.
	for _, m := range plot.Methods {
		s := plot.StyleOf(m)
		head = append(head, app.Th().Scope("col").Class("mcol").Title(s.Long).Body(
			swatch(m), app.Span().Class("mname").Text(s.Name)))
		if m == plot.Exact {
			for k, name := range t.Candidates {
				head = append(head, candidateHead(k, len(t.Candidates), name))
			}
		}
	}
	// One component per section, given a pointer into the table: while the
	// table is the same, toggling Stale re-renders the table's element and
	// compares each section in constant time, without rendering its rows.
	bodies := make([]app.UI, len(t.Sections))
	for i := range t.Sections {
		bodies[i] = &TableSection{Section: &t.Sections[i], Columns: 1 + len(plot.Methods) + len(t.Candidates)}
	}
	cls := "results"
	if t.Stale {
		cls += " stale"
	}
	return app.Div().Class("table-scroll").Body(
		app.Table().Class(cls).Body(
			app.Caption().Class("sr-only").Text("Exact posterior and Gaussian fits side by side; ● marks the fit closest to the exact value in each row."),
			app.THead().Body(app.Tr().Body(head...)),
			app.Range(bodies).Slice(func(i int) app.UI { return bodies[i] }),
		),
		app.P().Class("table-key").Body(
			app.Span().Class("best-dot").Text("●"),
			app.Text(" closest to the exact value in its row. Small print: error estimate of the exact value; a fit's deviation from it."),
			candidateKey(len(t.Candidates)),
		),
	)
}

// TableSection is one section of the results table: its title row and its
// rows, in a table body.
type TableSection struct {
	app.Compo
	Section *Section
	// Columns is the table's number of columns.
	Columns int
}

// Render draws the section.
func (ts *TableSection) Render() app.UI {
	sec := ts.Section
	rows := make([]app.UI, 0, len(sec.Rows)+1)
	rows = append(rows, app.Tr().Class("sec").Body(
		app.Th().Scope("rowgroup").ColSpan(ts.Columns).Body(app.Span().Class("sec-title").Text(sec.Title))))
	for _, r := range sec.Rows {
		cells := make([]app.UI, 0, len(plot.Methods)+len(r.Cands)+1)
		cells = append(cells, app.Th().Scope("row").Class("rlabel").Title(r.Hint).Text(r.Label))
		for _, m := range plot.Methods {
			cells = append(cells, cell(r.Cells[m], ""))
			if m == plot.Exact {
				for k, c := range r.Cands {
					cells = append(cells, candidateCell(k, len(r.Cands), c))
				}
			}
		}
		rows = append(rows, app.Tr().Body(cells...))
	}
	return app.TBody().Body(rows...)
}

// cell draws a table cell, with extra classes (or "").
func cell(c Cell, class string) app.UI {
	td := app.Td().Class("num")
	if class != "" {
		td = td.Class(class)
	}
	if c.Absent != "" {
		td = td.Title(c.Absent)
	}
	if c.Best {
		td = td.Class("best")
	}
	body := []app.UI{}
	if c.Best {
		body = append(body, app.Span().Class("best-dot").Aria("label", "closest").Text("● "))
	}
	body = append(body, app.Span().Class("v").Text(c.Text))
	if c.Sub != "" {
		body = append(body, app.Span().Class("sub").Text(c.Sub))
	}
	if c.Absent != "" && c.Text == "—" {
		body = append(body, app.Span().Class("sr-only").Text(" ("+c.Absent+")"))
	}
	return td.Body(body...)
}

// Diagnostics lists the analysis's diagnostics as plain sentences with their
// severity, most severe first.
type Diagnostics struct {
	app.Compo
	Items []engine.Diagnostic
	Stale bool
	// Host and Offer: the parameters with a bound fitted as they are,
	// which a button beside the infinite_kl diagnostic fits on their log
	// or logit scale (Host.FitUnconstrained); nil for none.
	Host  Host
	Offer []scaleOffer
}

// Render draws the list.
func (d *Diagnostics) Render() app.UI {
	if len(d.Items) == 0 {
		cls := "diag-empty muted"
		if d.Stale {
			cls += " stale"
		}
		return app.Div().Class(cls).Text("No warnings: none of the checks found a problem.")
	}
	rank := map[string]int{engine.SeverityError: 0, engine.SeverityWarning: 1, engine.SeverityInfo: 2}
	items := append([]engine.Diagnostic(nil), d.Items...)
	for i := 1; i < len(items); i++ { // insertion sort keeps the engine's order within a severity
		for j := i; j > 0 && rank[items[j].Severity] < rank[items[j-1].Severity]; j-- {
			items[j], items[j-1] = items[j-1], items[j]
		}
	}
	lis := make([]app.UI, len(items))
	for i, it := range items {
		icon, word := "i", "note"
		switch it.Severity {
		case engine.SeverityWarning:
			icon, word = "!", "warning"
		case engine.SeverityError:
			icon, word = "×", "error"
		}
		body := []app.UI{
			app.Span().Class("diag-icon").Aria("hidden", "true").Text(icon),
			app.Span().Class("diag-sev").Text(word + ": "),
			app.Span().Text(it.Message),
		}
		if it.Code == engine.CodeInfiniteKL && len(d.Offer) > 0 && d.Host != nil && !d.Stale {
			names := make([]string, len(d.Offer))
			for k, o := range d.Offer {
				names[k] = o.Name
			}
			body = append(body, app.Button().Type("button").ID(FitUnconstrainedID).Class("diag-action").
				Text(offerLabel(d.Offer)).
				OnClick(func(ctx app.Context, e app.Event) { d.Host.FitUnconstrained(ctx, names) }))
		}
		lis[i] = app.Li().Class("diag diag-" + it.Severity).Title(it.Code).Body(body...)
	}
	cls := "diags"
	if d.Stale {
		cls += " stale"
	}
	return app.Ul().Class(cls).Body(lis...)
}

// FitUnconstrainedID is the id of the button beside the infinite_kl
// diagnostic that fits the bounded parameters on their log or logit scale.
const FitUnconstrainedID = "bc-fit-unconstrained"

// offerLabel is the offer's button text: "Fit s on the log scale", "Fit
// s and p on the log and logit scales".
func offerLabel(offer []scaleOffer) string {
	names := make([]string, len(offer))
	var scales []string
	for i, o := range offer {
		names[i] = o.Name
		if w := string(o.Scale); !slices.Contains(scales, w) {
			scales = append(scales, w)
		}
	}
	if len(offer) == 1 {
		return "Fit " + names[0] + " on the " + scales[0] + " scale"
	}
	what := "the " + scales[0] + " scale"
	if len(scales) > 1 {
		what = "the " + strings.Join(scales, " and ") + " scales"
	}
	return "Fit " + joinNames(names) + " on " + what
}

// joinNames joins names as "a", "a and b", "a, b and c".
func joinNames(names []string) string {
	if len(names) < 2 {
		return strings.Join(names, "")
	}
	return strings.Join(names[:len(names)-1], ", ") + " and " + names[len(names)-1]
}

// Modes lists the local maxima the mode search found.
type Modes struct {
	app.Compo
	Params []string
	Items  []engine.Mode
	// Cost shows the cost J = -log p at each mode (a model given as a
	// cost) in place of log p.
	Cost bool
}

// Render draws the modes as a small table.
func (m *Modes) Render() app.UI {
	if len(m.Items) == 0 {
		return app.P().Class("muted").Text("No mode found.")
	}
	head := []app.UI{app.Th().Scope("col").Text("#")}
	for _, p := range m.Params {
		head = append(head, app.Th().Scope("col").Text(p))
	}
	value := app.Th().Scope("col").Title("log-density at the mode, up to the model's constant; on the fitting scale (with its Jacobian) where a parameter is transformed").Text("log p")
	if m.Cost {
		value = app.Th().Scope("col").Title("the model's cost J = -log p at the mode, on the original scale, as the model writes it").Text("cost J")
	}
	head = append(head,
		value,
		app.Th().Scope("col").Title("approximate share of the mass near this mode").Text("mass"),
		app.Th().Scope("col").Text("curvature"),
	)
	rows := make([]app.UI, len(m.Items))
	for i, md := range m.Items {
		cells := []app.UI{app.Td().Class("num").Text(strconv.Itoa(i + 1))}
		for k := range m.Params {
			cells = append(cells, app.Td().Class("num").Text(plot.FormatNumber(at(md.X, k), 5)))
		}
		var notes []string
		if md.PositiveDefinite {
			notes = append(notes, "negative definite Hessian")
		} else {
			notes = append(notes, "not a proper maximum (Hessian not negative definite)")
		}
		if md.OnBound {
			notes = append(notes, "on a bound")
		}
		cells = append(cells,
			app.Td().Class("num").Text(modeValue(md, m.Cost)),
			app.Td().Class("num").Text(fmtPercent(md.Mass)),
			app.Td().Class("note").Text(strings.Join(notes, "; ")),
		)
		rows[i] = app.Tr().Body(cells...)
	}
	return app.Div().Class("table-scroll").Body(app.Table().Class("modes").Body(
		app.Caption().Class("sr-only").Text("Modes found by the multi-start search"),
		app.THead().Body(app.Tr().Body(head...)),
		app.TBody().Body(rows...),
	))
}

// modeValue is the log-density at a mode, or its cost J for a cost model
// ("—" where the cost could not be computed).
func modeValue(md engine.Mode, cost bool) string {
	if !cost {
		return plot.FormatNumber(md.LogDensity, 5)
	}
	if md.Cost == nil {
		return "—"
	}
	return plot.FormatNumber(*md.Cost, 5)
}
