package ui

import (
	"strconv"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/engine"
	"bellcheck/engine/model"
	"bellcheck/engine/transform"
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
		card("Diagnostics", "bc-h-diag", diagnostics(r, o.Host)),
		card("Plots", "bc-h-plots", &PlotPanel{Host: o.Host, Set: figs, View: r.View, Stale: r.Stale, Computing: r.Busy && !r.Stale}),
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
func diagnostics(r ResultView, host Host) app.UI {
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
	return app.Div().Body(append(extra, &Diagnostics{Items: r.Shown.Result.Diagnostics, Stale: r.Stale,
		Host: host, Offer: unconstrainedOffer(r.Shown.Result, r.Shown.Model)})...)
}

// unconstrainedOffer lists the parameters with a bound that res fitted as
// they are, where the reverse-KL fits are absent or KL(q||p) infinite for
// that reason (the infinite_kl diagnostic): on the log or logit scale every
// fit exists. Nil where there is nothing to offer.
func unconstrainedOffer(res *engine.Result, m *model.Model) []scaleOffer {
	if res == nil || m == nil || len(m.Params) != len(res.Params) || len(res.Candidates) > 0 {
		// With a candidate Gaussian of the user's own the scale stays as it
		// is: one given on the original scale is refused on a log or logit
		// scale (that is why a bounded parameter's default is the identity
		// there), one given on the fitting scale would change its meaning.
		return nil
	}
	infinite := false
	for _, d := range res.Diagnostics {
		infinite = infinite || d.Code == engine.CodeInfiniteKL
	}
	if !infinite {
		return nil
	}
	var out []scaleOffer
	for i, prm := range m.Params {
		if sc := transform.Unconstrained(prm.Lo, prm.Hi); !sc.IsIdentity() && i < len(res.Scales) && res.Scales[i].IsIdentity() {
			out = append(out, scaleOffer{Name: prm.Name, Scale: sc})
		}
	}
	return out
}

// scaleOffer is a parameter and the scale the offer fits it on.
type scaleOffer struct {
	Name  string
	Scale engine.Scale
}

func card(title, id string, body ...app.UI) app.UI {
	return app.Section().Class("card").Aria("labelledby", id).Body(
		append([]app.UI{app.H2().ID(id).Text(title)}, body...)...,
	)
}
