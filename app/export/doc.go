// Package export turns a result into the files and texts the page hands
// out: the JSON of the command line, a CSV of every quantity by method, the
// results table as Markdown and as a LaTeX tabular, and a plot as a
// standalone SVG. It is pure Go, with no browser calls, so it is tested
// natively.
package export
