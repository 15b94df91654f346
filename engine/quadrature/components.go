package quadrature

// The rule integrates a vector of components at once: the density (1), and
// on each scale (the unconstrained coordinates y = z - mode and the original
// ones x~ = x(z) - x(mode)) the first powers, the products of pairs, the
// cubes and the fourth powers. Their sums give the normalising constant and
// every moment from one pass.
//
// Tail checks watch a shorter vector: the density and, per axis and scale,
// the second and fourth powers (the moments that can be infinite).

// layout gives the offsets of the components for d axes.
type layout struct {
	d                  int
	nBlock             int // components of one scale
	n                  int // all components
	y1, y2, y3, y4, xo int // offsets in the first block; xo is the second block's start
	nWatch             int // 1 + 6d
}

func newLayout(d int) layout {
	l := layout{d: d}
	l.y1 = 1
	l.y2 = l.y1 + d
	l.y3 = l.y2 + d*(d+1)/2
	l.y4 = l.y3 + d
	l.nBlock = 3*d + d*(d+1)/2
	l.xo = l.nBlock
	l.n = 1 + 2*l.nBlock
	l.nWatch = 1 + 6*d
	return l
}

// pair returns the packed index (within the products) of axes i and j.
func (l layout) pair(i, j int) int {
	if i > j {
		i, j = j, i
	}
	return i*l.d - i*(i-1)/2 + (j - i)
}

// Watched components: 0 the density; then per axis a: 1+a the second power
// of y, 1+d+a its fourth power, 1+2d+a and 1+3d+a the same of x~.
func (l layout) wY2(a int) int { return 1 + a }
func (l layout) wY4(a int) int { return 1 + l.d + a }
func (l layout) wX2(a int) int { return 1 + 2*l.d + a }
func (l layout) wX4(a int) int { return 1 + 3*l.d + a }

// wY1 and wX1 hold the remainders of the first absolute powers (derived
// from the density's and the second power's: their geometric mean).
func (l layout) wY1(a int) int { return 1 + 4*l.d + a }
func (l layout) wX1(a int) int { return 1 + 5*l.d + a }

// watchFromFull extracts the watched components of a full vector.
func (l layout) watchFromFull(full, w []float64) {
	w[0] = full[0]
	for a := 0; a < l.d; a++ {
		p := l.y2 + l.pair(a, a)
		w[l.wY2(a)] = full[p]
		w[l.wY4(a)] = full[l.y4+a]
		w[l.wX2(a)] = full[l.xo+p]
		w[l.wX4(a)] = full[l.xo+l.y4+a]
	}
}

// watchFromPoint writes the watched components of one point of weight g
// with offsets y and x~.
func (l layout) watchFromPoint(y, x []float64, g float64, w []float64) {
	w[0] = g
	for a := 0; a < l.d; a++ {
		y2 := y[a] * y[a]
		x2 := x[a] * x[a]
		w[l.wY2(a)] = g * y2
		w[l.wY4(a)] = g * y2 * y2
		w[l.wX2(a)] = g * x2
		w[l.wX4(a)] = g * x2 * x2
	}
	if g == 0 {
		for i := range w {
			w[i] = 0
		}
	}
}

// lineSums are the sums along one line of the innermost axis (the only
// coordinate that moves along it): the weights times the powers 0 to 4 of
// its offset on both scales.
type lineSums struct {
	s  [5]float64 // sum g * y^p
	xs [5]float64 // sum g * x~^p (xs[0] unused)
}

func (s *lineSums) reset() { *s = lineSums{} }

// add accumulates a point of weight g with offsets y and x of the line's axis.
func (s *lineSums) add(g, y, x float64) {
	y2 := y * y
	x2 := x * x
	s.s[0] += g
	s.s[1] += g * y
	s.s[2] += g * y2
	s.s[3] += g * y2 * y
	s.s[4] += g * y2 * y2
	s.xs[1] += g * x
	s.xs[2] += g * x2
	s.xs[3] += g * x2 * x
	s.xs[4] += g * x2 * x2
}

// expand writes the full component vector of a line along axis a = d-1,
// the other axes fixed at offsets y and x (entries a of y and x unused),
// scaled by f.
func (l layout) expand(s *lineSums, y, x []float64, f float64, full []float64) {
	d := l.d
	a := d - 1
	full[0] = f * s.s[0]
	for blk := 0; blk < 2; blk++ {
		o := blk * l.nBlock
		v := y
		p := &s.s
		if blk == 1 {
			v = x
			p = &s.xs
		}
		p0 := s.s[0]
		for i := 0; i < d; i++ {
			if i == a {
				full[o+l.y1+i] = f * p[1]
				full[o+l.y3+i] = f * p[3]
				full[o+l.y4+i] = f * p[4]
				continue
			}
			vi := v[i]
			full[o+l.y1+i] = f * vi * p0
			full[o+l.y3+i] = f * vi * vi * vi * p0
			full[o+l.y4+i] = f * vi * vi * vi * vi * p0
		}
		for i := 0; i < d; i++ {
			for j := i; j < d; j++ {
				var val float64
				switch {
				case i == a && j == a:
					val = p[2]
				case j == a:
					val = v[i] * p[1]
				default:
					val = v[i] * v[j] * p0
				}
				full[o+l.y2+l.pair(i, j)] = f * val
			}
		}
	}
}
