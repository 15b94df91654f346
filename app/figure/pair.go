package figure

import (
	"math"
	"sort"

	"bellcheck/app/plot"
	"bellcheck/engine"
)

// Masses are the shares of the mass that the contours of a 2-D figure
// enclose, matching engine.Marginal2D.Levels.
var Masses = [3]float64{0.39, 0.86, 0.99}

// levelWidths scales each method's stroke for the 39, 86 and 99 % contours:
// the innermost is drawn heaviest.
var levelWidths = [3]float64{1.15, 0.85, 0.6}

// Heat is a heat map's pixels and where they go.
type Heat struct {
	// Width and Height are the image size in pixels; Pixels is row-major
	// RGBA, the top row first.
	Width, Height int
	Pixels        []byte
	// Box is where the image goes in the figure's viewBox units.
	Box Box
}

// Pair draws the 2-D marginal of parameters p.I (across) and p.J (up): the
// exact density as a heat map (its pixels in Figure.Heat), the exact
// contours that enclose 39, 86 and 99 % of the mass, each fit's matching
// contours, and, when mx and my are given and the figure is not compact, the
// two 1-D marginals along the top and right edges. It returns nil when there
// is nothing finite to draw.
func Pair(p *engine.Marginal2D, mx, my *engine.Marginal1D, o Options) *Figure {
	nx, ny := len(p.X), len(p.Y)
	if nx < 2 || ny < 2 || len(p.Density) != nx*ny {
		return nil
	}
	if !(p.X[nx-1] > p.X[0]) || !(p.Y[ny-1] > p.Y[0]) {
		return nil
	}
	// The view: where the exact mass and the shown fits' 99 % contours
	// are, widened for the candidates' (reach.go).
	xlo, xhi, ylo, yhi, _ := PairView(p, o)
	if fixed(o.XView) {
		xlo, xhi = o.XView[0], o.XView[1]
	}
	if fixed(o.YView) {
		ylo, yhi = o.YView[0], o.YView[1]
	}
	edges := mx != nil && my != nil && !o.Compact
	f := &Figure{W: 480, H: 480}
	switch {
	case o.Compact:
		f.W, f.H = 220, 200
		f.Plot = Box{X0: 46, Y0: 8, X1: f.W - 8, Y1: f.H - 26}
	case edges:
		f.Plot = Box{X0: 58, Y0: 80, X1: f.W - 80, Y1: f.H - 42}
	default:
		f.Plot = Box{X0: 58, Y0: 12, X1: f.W - 14, Y1: f.H - 42}
	}
	f.X = plot.Linear{D0: xlo, D1: xhi, R0: f.Plot.X0, R1: f.Plot.X1}
	f.Y = plot.Linear{D0: ylo, D1: yhi, R0: f.Plot.Y1, R1: f.Plot.Y0}

	res := 2 * max(nx, ny)
	res = max(120, min(res, 300))
	if o.Compact {
		res = max(80, min(res, 160))
	}
	f.Heat = HeatMap(p, res, res, xlo, xhi, ylo, yhi)
	f.Heat.Box = f.Plot

	nt := 6
	if o.Compact {
		nt = 3
	}
	xt := plot.Ticks(xlo, xhi, nt)
	yt := plot.Ticks(ylo, yhi, nt)

	var w svgWriter
	w.open(f.W, f.H, "joint density of "+o.XLabel+" and "+o.YLabel)
	clipID := o.ID + "-clip"
	w.clip(clipID, f.Plot)
	// The heat map itself is painted by the page on a canvas beneath.
	w.raw(`<g clip-path="url(#`, clipID, `)">`)
	g := plot.Grid{X: p.X, Y: p.Y, Z: p.Density}
	for _, meth := range plot.Fits {
		if !o.shown(meth) {
			continue
		}
		lines, ok := ellipsesOf(p, meth)
		if !ok {
			continue
		}
		s := plot.StyleOf(meth)
		for k := range 3 {
			ls := s
			ls.Width = s.Width * levelWidths[k]
			w.stroke(plot.Outline(lines[k], true, f.X, f.Y), ls, "")
		}
	}
	w.pinnedContours(o.PinnedPair, f.X, f.Y)
	w.candidateContours(p, o, f.X, f.Y)
	if o.shown(plot.Exact) {
		s := plot.StyleOf(plot.Exact)
		for k, level := range p.Levels {
			if !(level > 0) {
				continue
			}
			ls := s
			ls.Width = s.Width * levelWidths[k]
			for _, line := range plot.Contour(g, level) {
				w.stroke(plot.Outline(line.Points, line.Closed, f.X, f.Y), ls, "")
			}
		}
	}
	w.raw("</g>")
	w.raw(`<rect x="`, num(f.Plot.X0), `" y="`, num(f.Plot.Y0), `" width="`, num(f.Plot.W()), `" height="`, num(f.Plot.H()),
		`" fill="none" stroke="`, inkAxis, `" stroke-width="1"/>`)
	xl, yl := o.XLabel, o.YLabel
	if o.Compact {
		xl, yl = "", ""
	}
	w.xAxis(f.Plot, f.X, xt, xl, true)
	w.yAxis(f.Plot, f.Y, yt, yl, true)
	if edges {
		top := Box{X0: f.Plot.X0, Y0: 10, X1: f.Plot.X1, Y1: f.Plot.Y0 - 8}
		right := Box{X0: f.Plot.X1 + 8, Y0: f.Plot.Y0, X1: f.W - 10, Y1: f.Plot.Y1}
		w.edgeMarginal(mx, top, f.X, false, o, o.CandidateX)
		w.edgeMarginal(my, right, f.Y, true, o, o.CandidateY)
		w.colourBar(o.ID+"-key", Box{X0: right.X0 + 22, Y0: top.Y0 + 4, X1: right.X0 + 32, Y1: top.Y1 - 4})
	}
	w.close()
	f.SVG = w.b.String()
	return f
}

// edgeMarginal draws a 1-D marginal in a strip beside the heat map, sharing
// the heat map's scale along the strip; rotated strips run up the right
// edge with density increasing to the right.
// spreads are the candidates' normals along the strip, where known.
func (w *svgWriter) edgeMarginal(m *engine.Marginal1D, box Box, along plot.Linear, rotated bool, o Options, spreads []Spread) {
	curves := Curves(m)
	_, peak, ok := plot.Extent(curves[plot.Exact])
	if !ok || !(peak > 0) {
		return
	}
	top := peak * 1.08
	for _, meth := range plot.Fits {
		if _, h, ok := plot.Extent(curves[meth]); ok && o.shown(meth) {
			top = max(top, min(h, 1.6*peak))
		}
	}
	cands := make([][2][]float64, len(m.Candidates))
	for k := range m.Candidates {
		xs, ys := candidateCurve(m, k, spreadAt(spreads, k), min(along.D0, along.D1), max(along.D0, along.D1))
		cands[k] = [2][]float64{xs, ys}
		if _, h, ok := plot.Extent(ys); ok && !o.HideCandidates {
			top = max(top, min(h, 1.6*peak))
		}
	}
	var across plot.Linear
	if rotated {
		across = plot.Linear{D0: 0, D1: top, R0: box.X0, R1: box.X1}
	} else {
		across = plot.Linear{D0: 0, D1: top, R0: box.Y1, R1: box.Y0}
	}
	draw := func(xs, ys []float64, s plot.Style) {
		var p plot.Path
		for i := range min(len(xs), len(ys)) {
			y := ys[i]
			if math.IsNaN(y) || math.IsInf(y, 0) || xs[i] < along.D0 || xs[i] > along.D1 {
				p.Lift()
				continue
			}
			d := across.At(min(y, top))
			if rotated {
				p.LineTo(d, along.At(xs[i]))
			} else {
				p.LineTo(along.At(xs[i]), d)
			}
		}
		s.Width *= 0.8
		w.stroke(p.String(), s, "")
	}
	if rotated {
		w.line(box.X0, box.Y0, box.X0, box.Y1, lineAxis)
	} else {
		w.line(box.X0, box.Y1, box.X1, box.Y1, lineAxis)
	}
	for _, meth := range plot.Fits {
		if o.shown(meth) && curves[meth] != nil {
			draw(m.X, curves[meth], plot.StyleOf(meth))
		}
	}
	if !o.HideCandidates {
		for k, c := range cands {
			if c[1] != nil {
				draw(c[0], c[1], CandidateStyle(k, o.candidateName(k)))
			}
		}
	}
	if o.shown(plot.Exact) {
		draw(m.X, curves[plot.Exact], plot.StyleOf(plot.Exact))
	}
}

// colourBar draws the heat map's key: the colour map from 0 (bottom) to the
// peak density (top).
func (w *svgWriter) colourBar(id string, b Box) {
	const stops = 8
	w.raw(`<defs><linearGradient id="`, id, `" x1="0" y1="1" x2="0" y2="0">`)
	for i := 0; i <= stops; i++ {
		t := float64(i) / stops
		w.raw(`<stop offset="`, num(t), `" stop-color="`, plot.Density.At(t).Hex(), `"/>`)
	}
	w.raw(`</linearGradient></defs>`)
	w.raw(`<rect x="`, num(b.X0), `" y="`, num(b.Y0), `" width="`, num(b.W()), `" height="`, num(b.H()),
		`" fill="url(#`, id, `)" stroke="`, inkAxis, `" stroke-width="0.6"/>`)
	w.text(b.X0-3, b.Y0+7, "end", 9.5, inkFaint, "peak")
	w.text(b.X0-3, b.Y1, "end", 9.5, inkFaint, "0")
}

// HeatMap renders the density relative to its peak over [x0, x1] by
// [y0, y1] as width by height RGBA pixels through plot.Density, sampling the
// grid bilinearly at each pixel's centre (the top row is the largest y).
// Non-finite densities count as 0.
//
// It runs on the page's thread after every result (37,000 pixels for a
// 2-D result), so the work per pixel is plain arithmetic on slices: the
// density is cleaned once, each column's grid cell is found once, and a
// pixel is four stores.
func HeatMap(p *engine.Marginal2D, width, height int, x0, x1, y0, y1 float64) *Heat {
	nx, ny := len(p.X), len(p.Y)
	peak := 0.0
	for _, v := range p.Density {
		if v > peak && !math.IsInf(v, 0) {
			peak = v
		}
	}
	h := &Heat{Width: width, Height: height, Pixels: make([]byte, 4*width*height)}
	table := plot.Density.Table(256)
	// The density with every value that is not a finite non-negative
	// number set to 0.
	z := make([]float64, nx*ny)
	for i, v := range p.Density {
		if !math.IsNaN(v) && !math.IsInf(v, 0) && v >= 0 {
			z[i] = v
		}
	}
	// Each pixel column's grid cell and the fraction across it; a pixel
	// beyond the grid (a view widened for a candidate) has no density
	// (cell -1).
	cell := make([]int, width)
	frac := make([]float64, width)
	for i := range cell {
		x := x0 + (float64(i)+0.5)/float64(width)*(x1-x0)
		f := fracIndex(p.X, x)
		cell[i] = min(int(f), nx-2)
		frac[i] = f - float64(cell[i])
		if x < p.X[0] || x > p.X[nx-1] {
			cell[i] = -1
		}
	}
	blank := table[0]
	for row := range height {
		y := y1 - (float64(row)+0.5)/float64(height)*(y1-y0)
		fy := fracIndex(p.Y, y)
		outY := y < p.Y[0] || y > p.Y[ny-1]
		iy := min(int(fy), ny-2)
		ty := fy - float64(iy)
		lo, hi := z[iy*nx:(iy+1)*nx], z[(iy+1)*nx:(iy+2)*nx]
		px := h.Pixels[4*row*width : 4*(row+1)*width]
		for col := range width {
			c := blank
			if ix := cell[col]; ix >= 0 && !outY && peak > 0 {
				tx := frac[col]
				v := (1-ty)*((1-tx)*lo[ix]+tx*lo[ix+1]) + ty*((1-tx)*hi[ix]+tx*hi[ix+1])
				k := 0
				if r := v / peak * 255; r >= 255 {
					k = 255
				} else if r > 0 {
					// math.Round for r >= 0: the fraction r - k is exact.
					if k = int(r); r-float64(k) >= 0.5 {
						k++
					}
				}
				c = table[k]
			}
			q := px[4*col : 4*col+4 : 4*col+4]
			q[0], q[1], q[2], q[3] = c[0], c[1], c[2], c[3]
		}
	}
	return h
}

// fracIndex returns the fractional index of v in the increasing grid xs,
// clamped to [0, len(xs)-1].
func fracIndex(xs []float64, v float64) float64 {
	n := len(xs)
	if v <= xs[0] {
		return 0
	}
	if v >= xs[n-1] {
		return float64(n - 1)
	}
	k := sort.SearchFloat64s(xs, v) // xs[k-1] < v <= xs[k]
	if k == 0 {
		return 0
	}
	return float64(k-1) + (v-xs[k-1])/(xs[k]-xs[k-1])
}

// ellipsesOf returns a fit's contours in a pair, where the fit exists.
func ellipsesOf(p *engine.Marginal2D, meth plot.Method) ([3][][2]float64, bool) {
	f, ok := meth.Fit()
	if !ok {
		return [3][][2]float64{}, false
	}
	lines, ok := p.Ellipses[f]
	return lines, ok
}
