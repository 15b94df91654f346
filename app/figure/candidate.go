package figure

import (
	"bellcheck/app/plot"
	"bellcheck/engine"
)

// candidateLooks are the strokes of the user's candidate Gaussians, in
// turn: crimson, brown, pink and olive, thicker than the fits and with
// long dashes, apart from every fit method's look (plot.StyleOf).
var candidateLooks = []struct {
	colour, dash string
}{
	{"#c0143c", "16 4"},
	{"#6b4a12", "16 3 3 3"},
	{"#d14f8c", "16 4"},
	{"#4b5d16", "16 3 3 3"},
}

// CandidateStyle is the stroke of the k-th candidate Gaussian, named name
// (a name as in the model language, so it holds no markup).
func CandidateStyle(k int, name string) plot.Style {
	lk := candidateLooks[k%len(candidateLooks)]
	return plot.Style{Name: name, Long: "your Gaussian " + name, Key: name, Colour: lk.colour, Dash: lk.dash, Width: 2.3}
}

// candidateName returns the name of the k-th candidate: o.Candidates[k],
// or "candidate" where it is missing.
func (o Options) candidateName(k int) string {
	if k < len(o.Candidates) && o.Candidates[k] != "" {
		return o.Candidates[k]
	}
	return "candidate"
}

// candidateCurves draws each candidate's 1-D marginal along the axis sx
// (spreads are the candidates' normals along it, where known), or with
// clipped, the marks of those that rise above the panel.
func (w *svgWriter) candidateCurves(m *engine.Marginal1D, o Options, spreads []Spread, sx, sy plot.Linear, box Box, clipped bool) {
	if o.HideCandidates {
		return
	}
	for k := range m.Candidates {
		xs, ys := candidateCurve(m, k, spreadAt(spreads, k), sx.D0, sx.D1)
		if ys == nil {
			continue
		}
		s := CandidateStyle(k, o.candidateName(k))
		if clipped {
			w.clippedMark(xs, transform(ys, o.Log), sx, sy, box, s)
			continue
		}
		w.stroke(plot.Curve(xs, transform(ys, o.Log), sx, sy), s, "")
	}
}

// candidateContours draws each candidate's contours in a pair.
func (w *svgWriter) candidateContours(p *engine.Marginal2D, o Options, sx, sy plot.Linear) {
	if o.HideCandidates {
		return
	}
	for c, lines := range p.CandidateEllipses {
		s := CandidateStyle(c, o.candidateName(c))
		for k := range 3 {
			ls := s
			ls.Width = s.Width * levelWidths[k]
			w.stroke(plot.Outline(lines[k], true, sx, sy), ls, "")
		}
	}
}

// candidateTop returns hi raised to the highest candidate marginal (at most
// twice the exact peak, like the fits), on the linear scale.
func candidateTop(m *engine.Marginal1D, o Options, hi float64) float64 {
	if o.Log || o.HideCandidates {
		return hi
	}
	_, peak, ok := plot.Extent(m.Exact)
	if !ok {
		return hi
	}
	for k, ys := range m.Candidates {
		if s := spreadAt(o.CandidateX, k); s.known() {
			ys = []float64{s.pdf(s.Mean)} // its peak, wherever the grid's points are
		}
		if _, h, ok := plot.Extent(ys); ok {
			hi = max(hi, min(h, 2*peak)*1.06)
		}
	}
	return hi
}

// pinnedLook is the stroke of a pinned earlier result: the exact density's
// colour, thin and faint.
var pinnedLook = plot.Style{Name: "pinned", Colour: "#1b2127", Width: 1.6}

// pinnedExtra makes a pinned curve faint.
const pinnedExtra = ` stroke-opacity="0.3" class="pinned"`

// pinnedCurve draws a pinned result's exact marginal, faintly.
func (w *svgWriter) pinnedCurve(m *engine.Marginal1D, o Options, sx, sy plot.Linear) {
	if m == nil {
		return
	}
	w.stroke(plot.Curve(m.X, transform(m.Exact, o.Log), sx, sy), pinnedLook, pinnedExtra)
}

// pinnedContours draws a pinned result's exact contours, faintly.
func (w *svgWriter) pinnedContours(p *engine.Marginal2D, sx, sy plot.Linear) {
	if p == nil || len(p.Density) != len(p.X)*len(p.Y) {
		return
	}
	g := plot.Grid{X: p.X, Y: p.Y, Z: p.Density}
	for k, level := range p.Levels {
		if !(level > 0) {
			continue
		}
		ls := pinnedLook
		ls.Width *= levelWidths[k]
		for _, line := range plot.Contour(g, level) {
			w.stroke(plot.Outline(line.Points, line.Closed, sx, sy), ls, pinnedExtra)
		}
	}
}
