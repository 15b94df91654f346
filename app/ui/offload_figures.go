package ui

import (
	"bellcheck/app/figure"
	"bellcheck/engine"
)

// The worker builds a result's figures too (its code is warm, and the page's
// thread is spared 10 to 25 ms for a 4-D result: DEVELOPERS.md, "The
// analysis worker"); they travel as sentFigures, and the page links them to
// its decoded Result.

// figureView is the part of the page's View the worker draws with. A view
// with a pinned result (View.Pin) is drawn on the page.
type figureView struct {
	Log    bool
	Hidden [len(View{}.Hidden)]bool
	Hold   *Axes
}

// sentView returns the view the worker may draw with, or nil when the page
// draws (a pinned result would have to travel with every request).
func sentView(v View) *figureView {
	if v.Pin != nil {
		return nil
	}
	return &figureView{Log: v.Log, Hidden: v.Hidden, Hold: v.Hold}
}

// view is the page's View the worker draws with.
func (fv *figureView) view() View { return View{Log: fv.Log, Hidden: fv.Hidden, Hold: fv.Hold} }

// sentFigures is a FigureSet without its links to the Result.
type sentFigures struct {
	Dim   int
	Main  *sentPanel
	Grid  [][]*sentPanel
	Corr  [][]string
	Names []string
}

// sentPanel is a Panel without its links to the Result.
type sentPanel struct {
	ID   string
	Fig  *figure.Figure
	I, J int
	Log  bool
}

// sendFigures strips fs's links to its Result.
func sendFigures(fs *FigureSet) *sentFigures {
	if fs == nil {
		return nil
	}
	strip := func(p *Panel) *sentPanel {
		if p == nil {
			return nil
		}
		return &sentPanel{ID: p.ID, Fig: p.Fig, I: p.I, J: p.J, Log: p.Log}
	}
	return &sentFigures{Dim: fs.Dim, Main: strip(fs.Main), Corr: fs.Corr, Names: fs.Names, Grid: mapGrid(fs.Grid, strip)}
}

// linkFigures makes the figures the worker sent a FigureSet of r: each
// panel points at r's marginal (J < 0) or pair, as buildFigures does.
func linkFigures(sf *sentFigures, r *engine.Result) *FigureSet {
	if sf == nil || r == nil || r.Plots == nil {
		return nil
	}
	link := func(sp *sentPanel) *Panel {
		if sp == nil {
			return nil
		}
		p := &Panel{ID: sp.ID, Fig: sp.Fig, I: sp.I, J: sp.J, Log: sp.Log, Names: r.Params}
		if sp.J < 0 {
			p.M = marginalOf(r, sp.I)
		} else {
			p.P = pairOf(r, sp.I, sp.J)
		}
		return p
	}
	return &FigureSet{Dim: sf.Dim, Names: r.Params, Main: link(sf.Main), Corr: sf.Corr, Result: r, Grid: mapGrid(sf.Grid, link)}
}

// mapGrid applies f to every panel of a grid of panels (nil stays nil).
func mapGrid[A, B any](g [][]A, f func(A) B) [][]B {
	if g == nil {
		return nil
	}
	out := make([][]B, len(g))
	for i, row := range g {
		out[i] = make([]B, len(row))
		for j, p := range row {
			out[i][j] = f(p)
		}
	}
	return out
}

// marginalOf returns r's plotted marginal of parameter i (nil for none).
func marginalOf(r *engine.Result, i int) *engine.Marginal1D {
	for k := range r.Plots.Marginals {
		if r.Plots.Marginals[k].Param == i {
			return &r.Plots.Marginals[k]
		}
	}
	return nil
}

// pairOf returns r's plotted pair of parameters i and j (nil for none).
func pairOf(r *engine.Result, i, j int) *engine.Marginal2D {
	for k := range r.Plots.Pairs {
		if p := &r.Plots.Pairs[k]; p.I == i && p.J == j {
			return p
		}
	}
	return nil
}
