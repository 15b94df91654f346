// Package figure draws bellcheck's plots from an engine result as SVG text
// and heat-map pixels, in pure Go: the page shows the SVG, paints the pixels
// on a canvas beneath it, and exports the same SVG. Each figure also keeps
// its scales so the page can map a pointer position back to data.
package figure
