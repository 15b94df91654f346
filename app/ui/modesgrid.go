package ui

import (
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/plot"
	"bellcheck/engine"
)

// ModesGrid is the card of the modes the search found and the facts of the
// grid, with the page's and the engine's timings.
type ModesGrid struct {
	app.Compo
	// Shown is the result shown (its model's supports map fitting-scale
	// values back).
	Shown *Shown
	// Stale dims the card when the result belongs to an older model.
	Stale bool
	// Times are the page's timings of the result.
	Times PageTimes
}

// Render draws the modes table and the grid's facts.
func (c *ModesGrid) Render() app.UI {
	if c.Shown == nil || c.Shown.Result == nil {
		return app.P().Class("muted").Text("The modes and the grid appear here once the analysis has run.")
	}
	r := c.Shown.Result
	var box []string
	for i := range r.Params {
		if i < len(r.Grid.Lo) && i < len(r.Grid.Hi) && i < len(r.Grid.Points) {
			sc := resultScale(r, i)
			b := r.Params[i] + " ∈ [" + plot.FormatNumber(r.Grid.Lo[i], 4) + ", " +
				plot.FormatNumber(r.Grid.Hi[i], 4) + "], " + strconv.Itoa(r.Grid.Points[i]) + " points"
			if !sc.IsIdentity() {
				b += " on the " + sc.String() + " scale"
			}
			box = append(box, b)
		}
	}
	modes := r.Modes
	stages := make([]string, 0, len(r.Timing.Stages))
	for k := range r.Timing.Stages {
		stages = append(stages, k)
	}
	sort.Strings(stages)
	var st []string
	for _, k := range stages {
		st = append(st, stageName(k)+" "+fmtMillis(time.Duration(r.Timing.Stages[k]*float64(time.Millisecond))))
	}
	cls := "modes-grid"
	if c.Stale {
		cls += " stale"
	}
	t := c.Times
	facts := gridFacts(r, box)
	engineTime := fmtMillis(time.Duration(r.Timing.Total * float64(time.Millisecond)))
	if r.FitsToCome || (r.Plots != nil && r.Plots.PairsToCome) {
		// An early result: the analysis goes on, and the page's times
		// are known once the whole result is drawn.
		engineTime += " so far"
	} else {
		facts = append(facts,
			app.Dt().Text("page time"), app.Dd().Text(fmtMillis(t.Elapsed)+" in all, working in slices of at most "+fmtMillis(t.Longest)+
				" between pauses for the browser; figures "+fmtMillis(t.Figures)+", update of the page "+fmtMillis(t.Update)))
	}
	return app.Div().Class(cls).Body(
		&Modes{Params: r.Params, Items: modes, Cost: r.Form == "cost"},
		app.Dl().Class("facts").Body(append(facts,
			app.Dt().Text("engine time"), app.Dd().Text(engineTime+app.FormatString(" (%s)", strings.Join(st, ", "))),
		)...),
	)
}

// gridFacts describes the exact reference: the grid's box and points, and
// its edge mass, undefined points and error estimate where the grid is the
// reference; where the nested rule is, the grid that only scouted and the
// rule's error estimate.
func gridFacts(r *engine.Result, box []string) []app.UI {
	if r.Exact.Rule {
		name, role := "scouting grid", " (it only scouts, for the mode search's starts: the exact results and the plots come from the rule, whatever this box covers; a heavy tail can draw it far from the mass)"
		if !r.Grid.Scouted {
			name, role = "grid", " (evaluated in full: the quantiles and plots of the marginals the rule's walks do not resolve come from it; the rest from the rule)"
		}
		return []app.UI{
			app.Dt().Text("exact reference"), app.Dd().Text("quadrature around the modes, on each parameter's unconstrained scale"),
			app.Dt().Text(name), app.Dd().Text(strings.Join(box, "; ") + role),
			app.Dt().Text("log Z error estimate"), app.Dd().Text(fmtErr(r.Exact.LogZErr) + " (from the rule's nested steps)"),
		}
	}
	return []app.UI{
		app.Dt().Text("grid"), app.Dd().Text(strings.Join(box, "; ")),
		app.Dt().Text("mass in the edge layer"), app.Dd().Text(plot.FormatNumber(r.Grid.EdgeMass, 2) + " (largest over the faces)"),
		app.Dt().Text("grid points where log p is undefined"), app.Dd().Text(fmtPercent(r.Grid.NonFinite)),
		app.Dt().Text("log Z error estimate"), app.Dd().Text(fmtErr(r.Exact.LogZErr) + " (change from half resolution)"),
	}
}
