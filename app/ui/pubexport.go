package ui

import (
	"bellcheck/app/export"
	"bellcheck/app/figure"
	"bellcheck/app/plot"
	"bellcheck/engine"
)

// publicationFigure is a panel as a figure for a paper: drawn at full size
// with its axis titles (a grid's cell is drawn again over the same ranges),
// with a legend of the methods shown and the candidates, and the caption
// the page shows. heat is the panel's heat map read from the page (nil for
// none); its image covers the same ranges, so it fills the new plot box.
func (p *Page) publicationFigure(pn *Panel, heat *export.Raster) (string, float64, float64, error) {
	f := pn.Fig
	r := p.s.Result
	if p.figs != nil && p.figs.Result != nil {
		r = p.figs.Result
	}
	o := figure.Options{ID: pn.ID + "-pub", Log: pn.Log, Hidden: p.view.Hidden, XLabel: name(pn.I, pn), Candidates: candidateNames(r),
		XView: [2]float64{f.X.D0, f.X.D1}, CandidateX: candidateSpreads(r, pn.I), CandidateY: candidateSpreads(r, pn.J)}
	var full *figure.Figure
	if pn.J < 0 && pn.M != nil {
		o.YView = [2]float64{f.Y.D0, f.Y.D1}
		full = figure.Marginal(pn.M, o)
	} else if pn.P != nil {
		o.YLabel, o.YView = name(pn.J, pn), [2]float64{f.Y.D0, f.Y.D1}
		full = figure.Pair(pn.P, nil, nil, o)
		if full != nil && f.Heat != nil && heat != nil && p.figs != nil && p.figs.Main != pn {
			h := full.Heat.Box
			heat = &export.Raster{DataURL: heat.DataURL, X: h.X0, Y: h.Y0, Width: h.W(), Height: h.H()}
		}
	}
	if full == nil || (p.figs != nil && p.figs.Main == pn) {
		full = f // the main panel is drawn at full size already
	}
	return export.PublicationSVG(full.SVG, full.W, full.H, heat, legendEntries(r, p.view), exportCaption(pn))
}

// legendEntries are the legend's lines: each method shown whose fit
// exists, then the candidates.
func legendEntries(r *engine.Result, v View) []export.LegendEntry {
	var out []export.LegendEntry
	for _, m := range plot.Methods {
		if v.Hidden[m] {
			continue
		}
		if f, ok := m.Fit(); ok && (r == nil || r.Fits[f] == nil) {
			continue
		}
		s := plot.StyleOf(m)
		out = append(out, export.LegendEntry{Label: s.Name, Colour: s.Colour, Dash: s.Dash, Width: s.Width})
	}
	for k, n := range candidateNames(r) {
		s := figure.CandidateStyle(k, n)
		out = append(out, export.LegendEntry{Label: n + " (yours)", Colour: s.Colour, Dash: s.Dash, Width: s.Width})
	}
	return out
}

// exportCaption is the caption of a panel, as the page words it.
func exportCaption(pn *Panel) string {
	if pn.J < 0 {
		return "Marginal density of " + name(pn.I, pn) + ": exact (shaded) and each fit."
	}
	return "Joint density of " + name(pn.I, pn) + " and " + name(pn.J, pn) +
		": exact density shaded, lines enclosing 39, 86 and 99 % of each method's mass."
}
