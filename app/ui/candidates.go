package ui

import (
	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/figure"
	"bellcheck/engine"
)

// candidateNames lists a result's candidate Gaussians by name.
func candidateNames(r *engine.Result) []string {
	if r == nil {
		return nil
	}
	out := make([]string, len(r.Candidates))
	for k, c := range r.Candidates {
		out[k] = c.Name
	}
	return out
}

// candidateSwatch is a line sample in the k-th candidate's look. The
// colour and dash are the page's constants; the name is not part of it.
func candidateSwatch(k int) app.UI {
	return swatchOf(figure.CandidateStyle(k, ""))
}

// candidateLegend is the plots' legend entries of the candidates.
func candidateLegend(r *engine.Result) []app.UI {
	var items []app.UI
	for k, name := range candidateNames(r) {
		items = append(items, app.Span().Class("legend-item cand-item").Title("your Gaussian "+name).Body(
			candidateSwatch(k), app.Span().Text(name)))
	}
	return items
}

// CandidateTable scores the user's own Gaussians against the exact density
// with the same quantities as the fits' columns of the results table.
type CandidateTable struct {
	app.Compo
	Result *engine.Result
	Stale  bool
}

// Render draws one column per candidate.
func (t *CandidateTable) Render() app.UI {
	r := t.Result
	if r == nil || len(r.Candidates) == 0 {
		return app.P().Class("muted").Text("No Gaussians of your own: add a line such as #@ gaussian mine mean.x=0 sd.x=1 to the model.")
	}
	head := []app.UI{app.Th().Scope("col").Class("rlabel").Text("")}
	head = append(head, app.Th().Scope("col").Class("mcol").Text("exact"))
	for k, c := range r.Candidates {
		head = append(head, app.Th().Scope("col").Class("mcol cand-col").Body(candidateSwatch(k), app.Span().Text(c.Name)))
	}
	var rows []app.UI
	row := func(label, hint, exact string, cell func(f *engine.Fit) string) {
		cells := []app.UI{app.Th().Scope("row").Class("rlabel").Title(hint).Text(label), app.Td().Class("num").Text(exact)}
		for _, c := range r.Candidates {
			v := "—"
			if c.Fit != nil {
				v = cell(c.Fit)
			}
			cells = append(cells, app.Td().Class("num").Text(v))
		}
		rows = append(rows, app.Tr().Body(cells...))
	}
	for i, p := range r.Params {
		exMean, exSD := at(r.Exact.Mean, i), at(r.Exact.SD, i)
		row("mean "+p, "The candidate's mean; below, its distance from the exact mean in exact sds.", fmtScaled(exMean, exSD),
			func(f *engine.Fit) string {
				return fmtScaled(at(f.Mean, i), exSD) + " (" + fmtSigned(at(f.MeanErrSD, i), 2) + " sd)"
			})
		row("sd "+p, "The candidate's sd and its ratio to the exact sd.", fmtNum(exSD),
			func(f *engine.Fit) string { return fmtNum(at(f.SD, i)) + " (×" + fmtNum(at(f.SDRatio, i)) + ")" })
	}
	row("KL(q‖p)", "KL divergence of the candidate q from the exact density p, on the grid.", "0",
		func(f *engine.Fit) string { return fmtNum(f.KLqp) })
	row("KL(p‖q)", "KL divergence of the exact density p from the candidate q, on the grid.", "0",
		func(f *engine.Fit) string { return fmtNum(f.KLpq) })
	row("Hellinger", "Hellinger distance between the candidate and the exact density.", "0",
		func(f *engine.Fit) string { return fmtNum(f.Hellinger) })
	row("95 % coverage", "Exact mass inside the candidate's central 95 % region.", "95 %",
		func(f *engine.Fit) string { return fmtPercent(f.Coverage95) })
	cls := "table-scroll"
	if t.Stale {
		cls += " stale"
	}
	return app.Div().Class(cls).Body(app.Table().ID("bc-cand-table").Class("results cand-table").Body(
		app.Caption().Class("sr-only").Text("Your Gaussians scored against the exact density"),
		app.THead().Body(app.Tr().Body(head...)),
		app.TBody().Body(rows...),
	))
}

// shownResult is the result a Shown holds (nil for none).
func shownResult(s *Shown) *engine.Result {
	if s == nil {
		return nil
	}
	return s.Result
}
