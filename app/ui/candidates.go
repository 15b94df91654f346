package ui

import (
	"strconv"

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

// candClass is the class of the k-th of n candidates' cells: tinted, the
// first and the last set off from their neighbours.
func candClass(k, n int) string {
	cls := "cand"
	if k == 0 {
		cls += " cand-first"
	}
	if k == n-1 {
		cls += " cand-last"
	}
	return cls
}

// candidateHead is the results table's column head of the k-th of n
// candidates.
func candidateHead(k, n int, name string) app.UI {
	return app.Th().Scope("col").Class("mcol cand-col "+candClass(k, n)).Title("your Gaussian "+name+": scored like the fits, not ranked among them").Body(
		candidateSwatch(k), app.Span().Class("mname").Text(name))
}

// candidateCell is the k-th of n candidates' cell of the results table.
func candidateCell(k, n int, c Cell) app.UI {
	return cell(c, candClass(k, n))
}

// shownResult is the result a Shown holds (nil for none).
func shownResult(s *Shown) *engine.Result {
	if s == nil {
		return nil
	}
	return s.Result
}

// candidateKey is the table key's sentence on the candidates' columns ("" without them).
func candidateKey(n int) app.UI {
	if n == 0 {
		return app.Text("")
	}
	if n == 1 {
		return app.Text(" The tinted column after the exact one: your own Gaussian (a #@ gaussian line), scored like the fits and not ranked among them.")
	}
	return app.Text(" The " + strconv.Itoa(n) + " tinted columns after the exact one: your own Gaussians (#@ gaussian lines), scored like the fits and not ranked among them.")
}

// candidateSpreads returns each candidate's normal marginal of parameter i
// (original scale), for the plots to widen to it; a zero Spread where the
// parameter is fitted on a log or logit scale (the candidate is no normal
// there) or the candidate was not scored. nil for i < 0 or no candidates.
func candidateSpreads(r *engine.Result, i int) []figure.Spread {
	if r == nil || i < 0 || len(r.Candidates) == 0 {
		return nil
	}
	if i < len(r.Scales) && !r.Scales[i].IsIdentity() {
		return nil
	}
	out := make([]figure.Spread, len(r.Candidates))
	for k, c := range r.Candidates {
		if c.Fit != nil && i < len(c.Fit.Mean) && i < len(c.Fit.SD) {
			out[k] = figure.Spread{Mean: c.Fit.Mean[i], SD: c.Fit.SD[i]}
		}
	}
	return out
}

// widenForPairs widens each parameter's range in a grid of plots (3 or 4
// parameters) to hold the candidates' outer contours in every pair it is
// part of, so that the grid's shared ranges show them.
func widenForPairs(views [][2]float64, r *engine.Result, v View) {
	if len(r.Candidates) == 0 || r.Plots == nil {
		return
	}
	for k := range r.Plots.Pairs {
		p := &r.Plots.Pairs[k]
		if p.I >= len(views) || p.J >= len(views) {
			continue
		}
		xlo, xhi, ylo, yhi, ok := figure.PairView(p, figure.Options{Hidden: v.Hidden})
		if !ok {
			continue
		}
		views[p.I] = union(views[p.I], xlo, xhi)
		views[p.J] = union(views[p.J], ylo, yhi)
	}
}

// union returns the range holding v (unless it is unset) and [lo, hi].
func union(v [2]float64, lo, hi float64) [2]float64 {
	if !(v[1] > v[0]) {
		return [2]float64{lo, hi}
	}
	return [2]float64{min(v[0], lo), max(v[1], hi)}
}
