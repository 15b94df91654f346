package engine

// MaxAxisPoints returns the most grid points per parameter that Analyse
// accepts for a model of d parameters: 200001 for one, 1501 for two, 203
// for three and 53 for four. The largest grids then hold at most 8.4
// million nodes (grid.MaxPoints) and the largest analyses, plots included,
// peak at about 35, 115, 115 and 90 MB of memory natively (measured with
// runtime.MemStats and the resident set size), well inside the 512 MB a
// browser tab may use for the WebAssembly heap.
func MaxAxisPoints(d int) int {
	switch d {
	case 1:
		return 200001
	case 2:
		return 1501
	case 3:
		return 203
	}
	return 53
}
