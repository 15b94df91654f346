package figure

import (
	"math"

	"bellcheck/app/plot"
	"bellcheck/engine"
)

// Marginal draws a parameter's 1-D marginal: the exact density as a shaded
// area under a solid line and each fit in its own colour and dash, with
// round-number ticks. It returns nil when the marginal has no finite exact
// density to draw.
func Marginal(m *engine.Marginal1D, o Options) *Figure {
	curves := Curves(m)
	lo, hi, ok := densityRange(curves, o)
	if !ok || len(m.X) < 2 || !(m.X[len(m.X)-1] > m.X[0]) {
		return nil
	}
	hi = candidateTop(m, o, hi)
	xlo, xhi := MarginalView(m, o)
	if fixed(o.XView) {
		xlo, xhi = o.XView[0], o.XView[1]
	}
	if fixed(o.YView) { // a held density axis
		lo, hi = o.YView[0], o.YView[1]
	}
	f := &Figure{W: 480, H: 250}
	f.Plot = Box{X0: 58, Y0: 12, X1: f.W - 14, Y1: f.H - 42}
	ylabel := "density"
	if o.Log {
		ylabel = "log density"
	}
	if o.Compact {
		f.W, f.H = 220, 200
		f.Plot = Box{X0: 46, Y0: 8, X1: f.W - 8, Y1: f.H - 26}
		ylabel = ""
	}
	f.X = plot.Linear{D0: xlo, D1: xhi, R0: f.Plot.X0, R1: f.Plot.X1}
	f.Y = plot.Linear{D0: lo, D1: hi, R0: f.Plot.Y1, R1: f.Plot.Y0}

	nx, ny := 6, 5
	if o.Compact {
		nx, ny = 3, 3
	}
	xt := plot.Ticks(xlo, xhi, nx)
	yt := plot.Ticks(lo, hi, ny)

	var w svgWriter
	label := "marginal density of " + o.XLabel
	w.open(f.W, f.H, label)
	clipID := o.ID + "-clip"
	w.clip(clipID, f.Plot)
	w.gridLines(f.Plot, f.X, f.Y, xt, yt)
	w.raw(`<g clip-path="url(#`, clipID, `)">`)
	exact := transform(curves[plot.Exact], o.Log)
	if o.shown(plot.Exact) {
		w.area(m.X, exact, f.X, f.Y, lo)
	}
	for _, meth := range plot.Fits {
		if o.shown(meth) && curves[meth] != nil {
			w.stroke(plot.Curve(m.X, transform(curves[meth], o.Log), f.X, f.Y), plot.StyleOf(meth), "")
		}
	}
	w.pinnedCurve(o.PinnedMarginal, o, f.X, f.Y)
	w.candidateCurves(m, o, o.CandidateX, f.X, f.Y, f.Plot, false)
	if o.shown(plot.Exact) {
		w.stroke(plot.Curve(m.X, exact, f.X, f.Y), plot.StyleOf(plot.Exact), "")
	}
	w.raw("</g>")
	w.candidateCurves(m, o, o.CandidateX, f.X, f.Y, f.Plot, true)
	for _, meth := range plot.Fits {
		if o.shown(meth) {
			w.clippedMark(m.X, transform(curves[meth], o.Log), f.X, f.Y, f.Plot, plot.StyleOf(meth))
		}
	}
	xl := o.XLabel
	if o.Compact {
		xl = ""
	}
	w.xAxis(f.Plot, f.X, xt, xl, true)
	w.yAxis(f.Plot, f.Y, yt, ylabel, true)
	w.close()
	f.SVG = w.b.String()
	return f
}

// MarginalView returns the range a marginal's plot shows: where the exact
// density and the shown fits hold their mass, padded, within the grid;
// widened to show the candidates (beyond the grid where their spread,
// o.CandidateX, is known; see reach.go).
func MarginalView(m *engine.Marginal1D, o Options) (lo, hi float64) {
	if len(m.X) < 2 {
		return 0, 0
	}
	curves := Curves(m)
	var fits [][]float64
	for _, meth := range plot.Fits {
		if o.shown(meth) {
			fits = append(fits, curves[meth])
		}
	}
	lo, hi = viewOf(m.X, curves[plot.Exact], fits)
	return candidateReach(m, o, lo, hi)
}

// area fills the region under a curve down to base, in the exact method's
// colour at low opacity.
func (w *svgWriter) area(xs, ys []float64, sx, sy plot.Linear, base float64) {
	var p plot.Path
	open := false
	var lastX float64
	for i := range min(len(xs), len(ys)) {
		y := ys[i]
		if math.IsNaN(y) || math.IsInf(y, 0) {
			if open {
				p.LineTo(sx.At(lastX), sy.At(base))
				p.Close()
				open = false
			}
			continue
		}
		if !open {
			p.MoveTo(sx.At(xs[i]), sy.At(base))
			open = true
		}
		p.LineTo(sx.At(xs[i]), sy.At(max(y, base)))
		lastX = xs[i]
	}
	if open {
		p.LineTo(sx.At(lastX), sy.At(base))
		p.Close()
	}
	if !p.Empty() {
		w.raw(`<path d="`, p.String(), `" fill="`, plot.StyleOf(plot.Exact).Colour, `" fill-opacity="0.09" stroke="none"/>`)
	}
}

// clippedMark marks a curve that rises above the panel: a small triangle at
// the top edge, above the curve's highest point, in the curve's colour,
// with its peak value as a tooltip. The panel's height follows the exact
// density (a fit may reach twice its peak), so a much narrower fit would
// otherwise look cut flat.
func (w *svgWriter) clippedMark(xs, ys []float64, sx, sy plot.Linear, box Box, s plot.Style) {
	top := max(sy.D0, sy.D1)
	best, at := math.Inf(-1), -1
	for i := range min(len(xs), len(ys)) {
		if y := ys[i]; !math.IsNaN(y) && y > best {
			best, at = y, i
		}
	}
	if at < 0 || !(best > top) {
		return
	}
	x := sx.At(xs[at])
	if x < box.X0 || x > box.X1 {
		return
	}
	y := box.Y0
	w.raw(`<path d="M`, num(x-5), " ", num(y+8), " L", num(x), " ", num(y), " L", num(x+5), " ", num(y+8),
		` Z" fill="`, s.Colour, `" stroke="white" stroke-width="0.8"><title>`, s.Name, " peaks at ",
		plot.FormatNumber(best, 4), ", above the panel</title></path>")
}
