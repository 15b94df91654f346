package figure

import (
	"html"
	"math"
	"strconv"
	"strings"

	"bellcheck/app/plot"
)

// Box is a rectangle in the figure's own units (its SVG viewBox).
type Box struct {
	X0, Y0, X1, Y1 float64
}

// W and H are the box's width and height.
func (b Box) W() float64 { return b.X1 - b.X0 }

// H is the box's height.
func (b Box) H() float64 { return b.Y1 - b.Y0 }

// svgWriter accumulates SVG markup.
type svgWriter struct {
	b strings.Builder
}

// num writes v rounded half away from zero to two decimals, in its
// shortest form.
func num(v float64) string {
	if r := v*100 + sign(v)*0.5; math.Abs(r) < 1e12 {
		var buf [24]byte
		return string(plot.AppendHundredths(buf[:0], int64(r)))
	}
	return strconv.FormatFloat(float64(int64(v*100+sign(v)*0.5))/100, 'f', -1, 64)
}

func sign(v float64) float64 {
	if v < 0 {
		return -1
	}
	return 1
}

func (w *svgWriter) raw(s ...string) {
	for _, x := range s {
		w.b.WriteString(x)
	}
}

// attr writes name="value" with the value escaped.
func (w *svgWriter) attr(name, value string) {
	w.raw(" ", name, `="`, html.EscapeString(value), `"`)
}

// open starts the root element with a viewBox of w by h.
func (w *svgWriter) open(width, height float64, label string) {
	w.raw(`<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 `, num(width), " ", num(height), `"`)
	w.attr("role", "img")
	w.attr("aria-label", label)
	w.raw(` font-family="system-ui, sans-serif" font-size="11">`)
}

func (w *svgWriter) close() { w.raw("</svg>") }

// path writes a path in a method's style.
func (w *svgWriter) stroke(d string, s plot.Style, extra string) {
	if d == "" {
		return
	}
	w.raw(`<path d="`, d, `" fill="none" stroke="`, s.Colour, `" stroke-width="`, num(s.Width), `"`)
	if s.Dash != "" {
		w.raw(` stroke-dasharray="`, s.Dash, `"`)
	}
	w.raw(` stroke-linejoin="round"`, extra, "/>")
}

// Ink colours of the figures' furniture, written as attributes so that an
// exported SVG looks the same outside the page.
const (
	inkAxis  = "#5d6670"
	inkGrid  = "#e3e6e9"
	inkText  = "#39414a"
	inkFaint = "#6b7580"
)

// line kinds.
const (
	lineAxis = iota
	lineTick
	lineGrid
)

func (w *svgWriter) line(x0, y0, x1, y1 float64, kind int) {
	colour, width := inkAxis, "1"
	switch kind {
	case lineTick:
		width = "0.8"
	case lineGrid:
		colour, width = inkGrid, "0.8"
	}
	w.raw(`<line x1="`, num(x0), `" y1="`, num(y0), `" x2="`, num(x1), `" y2="`, num(y1),
		`" stroke="`, colour, `" stroke-width="`, width, `"/>`)
}

// text writes escaped text; anchor is "start", "middle" or "end"; size is
// the font size, colour its fill.
func (w *svgWriter) text(x, y float64, anchor string, size float64, colour, s string) {
	w.raw(`<text x="`, num(x), `" y="`, num(y), `" text-anchor="`, anchor, `" font-size="`, num(size), `" fill="`, colour, `">`,
		html.EscapeString(s), "</text>")
}

// xAxis draws ticks and labels below box for the scale sx.
func (w *svgWriter) xAxis(box Box, sx plot.Linear, ticks []plot.Tick, label string, labels bool) {
	w.line(box.X0, box.Y1, box.X1, box.Y1, lineAxis)
	for _, t := range ticks {
		x := sx.At(t.Value)
		w.line(x, box.Y1, x, box.Y1+4, lineTick)
		if labels {
			w.text(x, box.Y1+15, "middle", 10.5, inkText, t.Label)
		}
	}
	if label != "" {
		w.text((box.X0+box.X1)/2, box.Y1+31, "middle", 12, inkText, label)
	}
}

// yAxis draws ticks and labels left of box for the scale sy.
func (w *svgWriter) yAxis(box Box, sy plot.Linear, ticks []plot.Tick, label string, labels bool) {
	w.line(box.X0, box.Y0, box.X0, box.Y1, lineAxis)
	for _, t := range ticks {
		y := sy.At(t.Value)
		w.line(box.X0-4, y, box.X0, y, lineTick)
		if labels {
			w.text(box.X0-6, y+3.5, "end", 10.5, inkText, t.Label)
		}
	}
	if label != "" {
		cx, cy := box.X0-40, (box.Y0+box.Y1)/2
		w.raw(`<text transform="translate(`, num(cx), " ", num(cy), `) rotate(-90)" text-anchor="middle" font-size="12" fill="`+inkText+`">`,
			html.EscapeString(label), "</text>")
	}
}

// grid draws faint lines at the ticks inside box.
func (w *svgWriter) gridLines(box Box, sx, sy plot.Linear, xt, yt []plot.Tick) {
	for _, t := range xt {
		x := sx.At(t.Value)
		w.line(x, box.Y0, x, box.Y1, lineGrid)
	}
	for _, t := range yt {
		y := sy.At(t.Value)
		w.line(box.X0, y, box.X1, y, lineGrid)
	}
}

// clip defines a clip path named id for box.
func (w *svgWriter) clip(id string, box Box) {
	w.raw(`<defs><clipPath id="`, id, `"><rect x="`, num(box.X0), `" y="`, num(box.Y0), `" width="`, num(box.W()), `" height="`, num(box.H()), `"/></clipPath></defs>`)
}
