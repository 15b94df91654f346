package figure

import (
	"math"

	"bellcheck/app/plot"
	"bellcheck/engine"
)

// Figure is one drawn plot.
type Figure struct {
	// SVG is a complete, self-contained SVG document.
	SVG string
	// W and H are the viewBox size; Plot is the data area in those units.
	W, H float64
	Plot Box
	// X and Y map data to viewBox units inside Plot (Y points down).
	X, Y plot.Linear
	// Heat holds the heat map's pixels for a 2-D figure (nil for 1-D): the
	// page paints them on a canvas placed exactly under Plot.
	Heat *Heat
}

// Options choose what a figure shows. The zero value shows every method on
// a linear density scale.
type Options struct {
	// ID prefixes the figure's internal SVG ids (clip paths), which must be
	// unique in the page.
	ID string
	// Log draws 1-D densities as log-densities.
	Log bool
	// Hidden hides methods, by plot.Method.
	Hidden [plot.NumMethods]bool
	// Compact drops axis titles and thins ticks for the cells of a grid.
	Compact bool
	// XLabel and YLabel name the axes (parameter names).
	XLabel, YLabel string
	// XView and YView, when their ends differ, fix the plotted ranges (so
	// the panels of a grid share each parameter's range); otherwise each
	// figure finds its own. A marginal's YView is its density axis.
	XView, YView [2]float64
	// Candidates names the user's candidate Gaussians, in the order of
	// Result.Candidates; HideCandidates leaves them out.
	Candidates     []string
	HideCandidates bool
	// CandidateX and CandidateY are the candidates' normal marginals along
	// the x and y axes, in the same order, where known (reach.go): a plot
	// widens to show them, beyond its grid if need be.
	CandidateX, CandidateY []Spread
	// PinnedMarginal and PinnedPair are an earlier result's exact density
	// of the same parameters, drawn faintly beneath (nil for none).
	PinnedMarginal *engine.Marginal1D
	PinnedPair     *engine.Marginal2D
}

// fixed reports whether a view range is set.
func fixed(v [2]float64) bool { return v[1] > v[0] }

func (o Options) shown(m plot.Method) bool { return !o.Hidden[m] }

// Curves returns a 1-D marginal's curves by method (nil where a fit is
// absent).
func Curves(m *engine.Marginal1D) [plot.NumMethods][]float64 {
	var c [plot.NumMethods][]float64
	c[plot.Exact] = m.Exact
	for _, f := range engine.Methods {
		c[plot.CurveOf(f)] = m.Fits[f]
	}
	return c
}

// logFloor is how far below the exact peak a log-density plot reaches, in
// nats: e^-14 is about a millionth of the peak.
const logFloor = 14

// densityRange returns the y range of a 1-D plot: on the linear scale from 0
// to a little above the exact peak (fits may reach twice it before they are
// clipped); on the log scale from logFloor nats below the exact peak to a
// little above it.
func densityRange(curves [plot.NumMethods][]float64, o Options) (lo, hi float64, ok bool) {
	_, peak, ok := plot.Extent(curves[plot.Exact])
	if !ok || !(peak > 0) {
		return 0, 0, false
	}
	top := peak
	for _, m := range plot.Fits {
		if !o.shown(m) {
			continue
		}
		if _, h, ok := plot.Extent(curves[m]); ok {
			top = max(top, min(h, 2*peak))
		}
	}
	if o.Log {
		lp := math.Log(peak)
		return lp - logFloor, math.Log(top) + 0.6, true
	}
	return 0, top * 1.06, true
}

// transform returns the curve as plotted: log-densities on the log scale
// (zeros become -Inf and break the line).
func transform(ys []float64, log bool) []float64 {
	if !log || ys == nil {
		return ys
	}
	out := make([]float64, len(ys))
	for i, y := range ys {
		if y > 0 {
			out[i] = math.Log(y)
		} else {
			out[i] = math.Inf(-1)
		}
	}
	return out
}
