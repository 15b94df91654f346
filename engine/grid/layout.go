package grid

// AxisPoints returns the number of nodes an axis asking for n points gets
// (n <= 0 asks for DefaultPoints(d)): at least MinPoints, and odd.
func AxisPoints(n, d int) int {
	if n <= 0 {
		n = DefaultPoints(d)
	}
	return oddPoints(n)
}

// Layable reports whether n equally spaced nodes fit on [lo, hi] in
// floating point with room to spare, as the box search requires: a spacing
// above 1e-9 of the bounds' magnitude.
func Layable(lo, hi float64, n int) bool { return n >= 2 && layable(lo, hi, n) }

// CoarsePoints returns the points per axis of FindBox's exploration grids
// in d dimensions when BoxSettings.Coarse is 0.
func CoarsePoints(d int) int { return oddPoints(defaultCoarse(d)) }
