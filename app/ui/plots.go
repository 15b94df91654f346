package ui

import (
	"math"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/jsdom"
	"bellcheck/app/plot"
	"bellcheck/engine"
)

// PlotPanel shows a result's plots with their legend and view controls.
type PlotPanel struct {
	app.Compo
	Host  Host
	Set   *FigureSet
	View  View
	Stale bool
	// Computing reports that the analysis of the result shown still runs
	// (its pair plots follow an early result).
	Computing bool
}

// Render draws the legend, then the plot or the pair grid.
func (pp *PlotPanel) Render() app.UI {
	fs := pp.Set
	if fs == nil {
		return app.P().Class("muted").Text("Plots appear here once the analysis has run.")
	}
	cls := "plots"
	if pp.Stale {
		cls += " stale"
	}
	var body app.UI
	switch {
	case fs.Main != nil && fs.Dim == 1:
		body = &FigureView{Panel: fs.Main, Caption: "Marginal density of " + fs.Names[0] + ": exact (shaded) and each fit."}
	case fs.Main != nil:
		body = &FigureView{Panel: fs.Main, Caption: "Joint density of " + fs.Names[0] + " and " + fs.Names[1] +
			": exact density shaded, lines enclosing 39, 86 and 99 % of each method's mass; marginals along the edges."}
	case fs.Grid != nil:
		body = pp.grid(fs)
	default:
		body = app.P().Class("muted").Text("The result has nothing to draw.")
	}
	return app.Div().Class(cls).Body(pp.legend(fs), body)
}

func (pp *PlotPanel) grid(fs *FigureSet) app.UI {
	d := fs.Dim
	cells := make([]app.UI, 0, d*d)
	for row := range d {
		for col := range d {
			p := fs.Grid[row][col]
			switch {
			case row < col:
				cells = append(cells, pp.corrCell(fs, col, row))
			case p == nil && row > col && fs.Result != nil && fs.Result.Plots != nil && fs.Result.Plots.PairsToCome:
				// An early result (engine.AnalyseEarly): the pairs follow.
				text := "The pair marginal was not computed: the analysis ended before it."
				if pp.Computing {
					text = "Computing the pair marginal…"
				}
				cells = append(cells, app.Div().Class("gcell muted pair-to-come").Text(text))
			case p == nil:
				cells = append(cells, app.Div().Class("gcell muted").Text("—"))
			case row == col:
				cells = append(cells, app.Div().Class("gcell").Body(
					app.Div().Class("gtitle").Text(fs.Names[col]),
					&FigureView{Panel: p, Compact: true, Caption: "Marginal of " + fs.Names[col]}))
			default:
				cells = append(cells, app.Div().Class("gcell").Body(
					app.Div().Class("gtitle").Text(fs.Names[row]+" against "+fs.Names[col]),
					&FigureView{Panel: p, Compact: true, Caption: fs.Names[col] + " across, " + fs.Names[row] + " up"}))
			}
		}
	}
	return app.Div().Class("pair-grid-scroll").Body(
		app.Div().Class("pair-grid").Style("grid-template-columns", "repeat("+itoa(d)+", minmax(150px, 1fr))").Body(cells...))
}

// corrCell fills the upper triangle with the pair's correlations by method,
// in the methods' colours.
func (pp *PlotPanel) corrCell(fs *FigureSet, i, j int) app.UI {
	r := fs.Result
	rows := []app.UI{app.Div().Class("gtitle").Text("corr(" + fs.Names[i] + ", " + fs.Names[j] + ")")}
	for _, m := range plot.Methods {
		var c float64
		if m == plot.Exact {
			c = at2(r.Exact.Corr, i, j)
		} else if f := fitOf(r, m); f != nil {
			c = at2(f.Corr, i, j)
			if !resultScale(r, i).IsIdentity() || !resultScale(r, j).IsIdentity() {
				// As the table: a transformed pair's fit correlation on
				// the fitting scale.
				c = at2(f.FittingScale.Corr, i, j)
			}
		} else {
			continue
		}
		rows = append(rows, app.Div().Class("corr-line").Body(
			swatch(m), app.Span().Class("mname").Text(plot.StyleOf(m).Name), app.Span().Class("num").Text(fmtCorr(c))))
	}
	return app.Div().Class("gcell corr").Body(rows...)
}

func (pp *PlotPanel) legend(fs *FigureSet) app.UI {
	items := make([]app.UI, 0, len(plot.Methods)+1)
	for _, m := range plot.Methods {
		m := m
		s := plot.StyleOf(m)
		id := "bc-show-" + s.Key
		cls, title, name := "legend-item", s.Long, s.Name
		if m == plot.Exact && fs.Result != nil && exactUnresolved(fs.Result) {
			title, name = s.Long+": "+exactNotResolved, s.Name+" (not resolved)"
		}
		if _, isFit := m.Fit(); isFit && fs.Result != nil && fitOf(fs.Result, m) == nil {
			// No curve to look for: say so where the line would be named.
			cls, title, name = "legend-item legend-absent", s.Long+": "+absentFit, s.Name+" (none)"
			if fs.Result.FitsToCome {
				title, name = s.Long+": "+fitToCome, s.Name+" (to come)"
			}
		}
		items = append(items, app.Label().For(id).Class(cls).Title(title).Body(
			app.Input().Type("checkbox").ID(id).Checked(!pp.View.Hidden[m]).
				OnChange(func(ctx app.Context, e app.Event) {
					on, err := jsdom.Checked(id)
					if err != nil {
						return
					}
					v := pp.View
					v.Hidden[m] = !on
					pp.Host.SetView(ctx, v.Log, v.Hidden)
				}),
			swatch(m),
			app.Span().Text(name),
		))
	}
	items = append(items, candidateLegend(fs.Result)...)
	hasOneD := fs.Dim == 1 || fs.Dim >= 3
	if hasOneD {
		items = append(items, app.Label().For("bc-log").Class("legend-item log-toggle").Body(
			app.Input().Type("checkbox").ID("bc-log").Checked(pp.View.Log).
				OnChange(func(ctx app.Context, e app.Event) {
					on, err := jsdom.Checked("bc-log")
					if err != nil {
						return
					}
					pp.Host.SetView(ctx, on, pp.View.Hidden)
				}),
			app.Span().Text("log density"),
		))
	}
	note := ""
	if fs.Dim >= 2 {
		note = "Shading: exact density. Lines enclose 39, 86 and 99 % of each method's mass (1, 2 and 3 sd for a Gaussian)."
	}
	if fs.Result != nil && exactUnresolved(fs.Result) {
		if note != "" {
			note += " "
		}
		note += "The exact curves are drawn from a reference that does not resolve this density (see the diagnostics): they do not show the posterior."
	}
	if fs.Result != nil && fs.Result.FitsToCome {
		// The exact result handed over before the fits (engine.AnalyseEarly).
		if note != "" {
			note += " "
		}
		note += "The exact density came first: the Gaussians' curves follow once they are fitted."
	}
	return app.Div().Class("legend").Body(
		app.FieldSet().Class("legend-set").Body(
			app.Legend().Class("sr-only").Text("Methods shown in the plots"),
			app.Div().Class("legend-items").Body(items...),
		),
		app.If(note != "", func() app.UI { return app.P().Class("legend-note").Text(note) }),
	)
}

func itoa(n int) string {
	if n < 0 {
		return "-" + itoa(-n)
	}
	if n < 10 {
		return string(rune('0' + n))
	}
	return itoa(n/10) + string(rune('0'+n%10))
}

// exactNotResolved is the exact curve's legend title where the reference
// does not resolve the density.
const exactNotResolved = "the reference does not resolve this density: see the diagnostics"

// exactUnresolved reports a result whose reference does not resolve the
// density as a whole: log Z left out, with the unresolved diagnostic (a
// grid that missed mass, or one too coarse for a spike).
func exactUnresolved(r *engine.Result) bool {
	if !math.IsNaN(r.Exact.LogZ) {
		return false
	}
	for _, d := range r.Diagnostics {
		if d.Code == engine.CodeUnresolved {
			return true
		}
	}
	return false
}
