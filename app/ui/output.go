package ui

import (
	"strconv"

	"github.com/maxence-charriere/go-app/v10/pkg/app"
)

// ResultView is what the results area shows.
type ResultView struct {
	// State is the area's state (a State constant); Gen the generation of
	// the newest requested analysis and ResultGen that of the result
	// shown; Busy reports an analysis running.
	State          string
	Gen, ResultGen uint64
	Busy           bool
	// Shown is the result shown (nil before one); RunErr the newest
	// analysis's error. Stale reports a result that is not the answer for
	// the text and options now in the editor.
	Shown  *Shown
	RunErr error
	Stale  bool
	// View is the plots' view.
	View View
}

// Outputs is the results area: the diagnostics, the plots, the results
// table and, in the full view, the modes and the grid. Its element carries
// the state attributes scripts and tests read (see OutputID).
type Outputs struct {
	app.Compo
	Host Host
	// Class is the area's class (the full and the embed view lay it out
	// differently).
	Class string
	Out   ResultView
	// Modes shows the modes-and-grid card, with the page's timings.
	Modes bool
	Times PageTimes
}

// Render draws the area and its cards.
func (o *Outputs) Render() app.UI {
	r := o.Out
	var figs *FigureSet
	var secs []Section
	if r.Shown != nil {
		figs, secs = r.Shown.Figures, r.Shown.Sections
	}
	cards := []app.UI{
		card("Diagnostics", "bc-h-diag", diagnostics(r)),
		card("Plots", "bc-h-plots", &PlotPanel{Host: o.Host, Set: figs, View: r.View, Stale: r.Stale}),
		card("Results", "bc-h-results", &ResultsTable{Sections: secs, Candidates: candidateNames(shownResult(r.Shown)), Stale: r.Stale}),
	}
	if res := shownResult(r.Shown); res != nil && res.Curvature != nil {
		cards = append(cards, card("Two curvatures", "bc-h-curv", &CurvatureCard{Result: res}))
	}
	if o.Modes {
		cards = append(cards, card("Modes and grid", "bc-h-modes", &ModesGrid{Shown: r.Shown, Stale: r.Stale, Times: o.Times}))
	}
	return app.Section().ID(OutputID).Class(o.Class).Aria("label", "Results").
		Aria("busy", strconv.FormatBool(r.Busy)).
		DataSet("state", r.State).
		DataSet("gen", r.Gen).
		DataSet("result-gen", r.ResultGen).
		Body(cards...)
}

// diagnostics is the diagnostics card's body: the analysis's error, if
// any, above the result's diagnostics.
func diagnostics(r ResultView) app.UI {
	var extra []app.UI
	if r.RunErr != nil {
		extra = append(extra, app.P().Class("diag diag-error").Body(
			app.Span().Class("diag-icon").Aria("hidden", "true").Text("×"),
			app.Span().Class("diag-sev").Text("error: "),
			app.Text("The analysis failed: "+r.RunErr.Error()),
		))
	}
	if r.Shown == nil {
		if len(extra) > 0 {
			return app.Div().Body(extra...)
		}
		return app.P().Class("muted").Text("Diagnostics appear here once the analysis has run.")
	}
	return app.Div().Body(append(extra, &Diagnostics{Items: r.Shown.Result.Diagnostics, Stale: r.Stale})...)
}

func card(title, id string, body ...app.UI) app.UI {
	return app.Section().Class("card").Aria("labelledby", id).Body(
		append([]app.UI{app.H2().ID(id).Text(title)}, body...)...,
	)
}
