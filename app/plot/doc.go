// Package plot computes the geometry of bellcheck's plots in pure Go: axis
// ticks at round numbers, linear scales, contour lines by marching squares,
// the heat-map colour map, the methods' line styles and
// compact SVG path data. It knows nothing of the browser.
package plot
