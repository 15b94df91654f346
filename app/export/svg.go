package export

import (
	"errors"
	"strconv"
	"strings"
)

// ErrNotSVG is returned when a figure's markup does not start with an <svg>
// element.
var ErrNotSVG = errors.New("export: the figure is not an SVG document")

// Raster is an image to lay under a figure's drawing: a data URL
// ("data:image/png;base64,...") and the box it fills, in the figure's
// viewBox units.
type Raster struct {
	DataURL             string
	X, Y, Width, Height float64
}

// StandaloneSVG returns a figure's SVG as a file of its own: with an XML
// declaration, a width and height of w by h (the viewBox size, in CSS
// pixels), a white background, and, when heat is given, the heat-map image
// (which the page paints on a canvas beneath the SVG) embedded under the
// drawing as an xlink:href image, which every SVG reader understands. Only a data URL of a PNG or JPEG is accepted as the image, so the
// file never refers to anything outside itself.
func StandaloneSVG(svg string, w, h float64, heat *Raster) (string, error) {
	const open = "<svg "
	i := strings.Index(svg, open)
	if i < 0 || strings.TrimSpace(svg[:i]) != "" {
		return "", ErrNotSVG
	}
	end := strings.IndexByte(svg[i:], '>')
	if end < 0 {
		return "", ErrNotSVG
	}
	end += i
	tag := svg[i:end]
	selfClosing := strings.HasSuffix(tag, "/")
	if selfClosing {
		tag = strings.TrimSuffix(tag, "/")
	}
	var b strings.Builder
	b.WriteString(`<?xml version="1.0" encoding="UTF-8"?>` + "\n")
	b.WriteString(tag)
	if !strings.Contains(tag, " width=") {
		b.WriteString(` width="` + num(w) + `"`)
	}
	if !strings.Contains(tag, " height=") {
		b.WriteString(` height="` + num(h) + `"`)
	}
	if heat != nil && !strings.Contains(tag, " xmlns:xlink=") {
		b.WriteString(` xmlns:xlink="http://www.w3.org/1999/xlink"`)
	}
	b.WriteString(">")
	b.WriteString(`<rect width="100%" height="100%" fill="#ffffff"/>`)
	if heat != nil {
		if !safeImageURL(heat.DataURL) {
			return "", errors.New("export: the heat map is not a PNG or JPEG data URL")
		}
		b.WriteString(`<image x="` + num(heat.X) + `" y="` + num(heat.Y) + `" width="` + num(heat.Width) + `" height="` + num(heat.Height) +
			`" preserveAspectRatio="none" xlink:href="` + heat.DataURL + `"/>`)
	}
	if selfClosing {
		b.WriteString("</svg>")
	} else {
		b.WriteString(svg[end+1:])
	}
	b.WriteString("\n")
	return b.String(), nil
}

// safeImageURL reports whether u is a base64 data URL of a PNG or JPEG
// image (letters, digits, + / = only after the comma, so it cannot end the
// attribute).
func safeImageURL(u string) bool {
	var rest string
	switch {
	case strings.HasPrefix(u, "data:image/png;base64,"):
		rest = u[len("data:image/png;base64,"):]
	case strings.HasPrefix(u, "data:image/jpeg;base64,"):
		rest = u[len("data:image/jpeg;base64,"):]
	default:
		return false
	}
	for i := 0; i < len(rest); i++ {
		c := rest[i]
		if !(c >= 'A' && c <= 'Z' || c >= 'a' && c <= 'z' || c >= '0' && c <= '9' || c == '+' || c == '/' || c == '=') {
			return false
		}
	}
	return len(rest) > 0
}

func num(v float64) string { return strconv.FormatFloat(v, 'f', -1, 64) }
