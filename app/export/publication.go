package export

import (
	"html"
	"strings"
)

// LegendEntry is one line of a publication figure's legend: a stroke
// sample in a colour ("#rrggbb") and dash, and its label.
type LegendEntry struct {
	Label, Colour, Dash string
	Width               float64
}

// Publication sizes (in the figure's units, CSS pixels).
const (
	legendWidth  = 170
	legendLine   = 18
	captionLine  = 15
	captionChars = 95 // characters a caption line holds at the figure's width of 480
)

// PublicationSVG returns a figure ready for a paper: the standalone figure
// (StandaloneSVG: its axes with their titles, the heat map embedded) with a
// legend to its right and the caption below it, every text escaped. It
// returns the document and its width and height.
func PublicationSVG(svg string, w, h float64, heat *Raster, legend []LegendEntry, caption string) (string, float64, float64, error) {
	inner, err := StandaloneSVG(svg, w, h, heat)
	if err != nil {
		return "", 0, 0, err
	}
	inner = strings.TrimSpace(strings.TrimPrefix(inner, `<?xml version="1.0" encoding="UTF-8"?>`))
	lines := wrap(caption, int(float64(captionChars)*(w+legendWidth)/480))
	W := w + legendWidth
	H := max(h, float64(len(legend))*legendLine+24) + float64(len(lines))*captionLine + 12
	var b strings.Builder
	b.WriteString(`<?xml version="1.0" encoding="UTF-8"?>` + "\n")
	b.WriteString(`<svg xmlns="http://www.w3.org/2000/svg" xmlns:xlink="http://www.w3.org/1999/xlink" width="` + num(W) + `" height="` + num(H) +
		`" viewBox="0 0 ` + num(W) + " " + num(H) + `" font-family="system-ui, sans-serif" font-size="11">`)
	b.WriteString(`<rect width="100%" height="100%" fill="#ffffff"/>`)
	b.WriteString(strings.Replace(inner, "<svg ", `<svg x="0" y="0" `, 1))
	b.WriteString(`<g class="legend">`)
	for i, e := range legend {
		y := 20 + float64(i)*legendLine
		x := w + 10
		b.WriteString(`<line x1="` + num(x) + `" y1="` + num(y) + `" x2="` + num(x+28) + `" y2="` + num(y) + `" stroke="` + html.EscapeString(e.Colour) +
			`" stroke-width="` + num(e.Width) + `"`)
		if e.Dash != "" {
			b.WriteString(` stroke-dasharray="` + html.EscapeString(e.Dash) + `"`)
		}
		b.WriteString(`/><text x="` + num(x+34) + `" y="` + num(y+4) + `" fill="#39414a">` + html.EscapeString(e.Label) + `</text>`)
	}
	b.WriteString(`</g><g class="caption" fill="#39414a">`)
	top := max(h, float64(len(legend))*legendLine+24) + 4
	for i, l := range lines {
		b.WriteString(`<text x="10" y="` + num(top+float64(i+1)*captionLine-3) + `">` + html.EscapeString(l) + `</text>`)
	}
	b.WriteString("</g></svg>\n")
	return b.String(), W, H, nil
}

// wrap breaks text into lines of at most n characters at spaces.
func wrap(text string, n int) []string {
	var lines []string
	var cur strings.Builder
	for _, word := range strings.Fields(text) {
		if cur.Len() > 0 && len([]rune(cur.String()))+1+len([]rune(word)) > n {
			lines = append(lines, cur.String())
			cur.Reset()
		}
		if cur.Len() > 0 {
			cur.WriteByte(' ')
		}
		cur.WriteString(word)
	}
	if cur.Len() > 0 {
		lines = append(lines, cur.String())
	}
	return lines
}
