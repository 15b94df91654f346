package plot

import "math"

// Grid is a function sampled on a rectangular grid: Z[iy*len(X)+ix] is the
// value at (X[ix], Y[iy]). X and Y are increasing.
type Grid struct {
	X, Y []float64
	Z    []float64
}

// Polyline is a contour line in data coordinates; Closed reports whether its
// last point joins its first.
type Polyline struct {
	Points [][2]float64
	Closed bool
}

// Contour returns the lines where the grid's function equals level, by
// marching squares with linear interpolation along cell edges. Saddle cells
// are resolved by the mean of their four corners. Cells with a NaN corner are
// skipped, so lines end there. Lines are open where they leave the grid.
func Contour(g Grid, level float64) []Polyline {
	nx, ny := len(g.X), len(g.Y)
	if nx < 2 || ny < 2 || len(g.Z) != nx*ny || math.IsNaN(level) {
		return nil
	}
	// Edge ids: horizontal edge (ix, iy)-(ix+1, iy) is iy*(nx-1)+ix;
	// vertical edge (ix, iy)-(ix, iy+1) is nh + iy*nx + ix.
	nh := (nx - 1) * ny
	hEdge := func(ix, iy int) int { return iy*(nx-1) + ix }
	vEdge := func(ix, iy int) int { return nh + iy*nx + ix }
	z := func(ix, iy int) float64 { return g.Z[iy*nx+ix] }

	type segment struct{ a, b int }
	var segs []segment
	for iy := 0; iy+1 < ny; iy++ {
		for ix := 0; ix+1 < nx; ix++ {
			z00, z10, z11, z01 := z(ix, iy), z(ix+1, iy), z(ix+1, iy+1), z(ix, iy+1)
			if math.IsNaN(z00) || math.IsNaN(z10) || math.IsNaN(z11) || math.IsNaN(z01) {
				continue
			}
			c := 0
			if z00 >= level {
				c |= 1
			}
			if z10 >= level {
				c |= 2
			}
			if z11 >= level {
				c |= 4
			}
			if z01 >= level {
				c |= 8
			}
			B, R, T, L := hEdge(ix, iy), vEdge(ix+1, iy), hEdge(ix, iy+1), vEdge(ix, iy)
			centreAbove := (z00+z10+z11+z01)/4 >= level
			switch c {
			case 1, 14:
				segs = append(segs, segment{L, B})
			case 2, 13:
				segs = append(segs, segment{B, R})
			case 3, 12:
				segs = append(segs, segment{L, R})
			case 4, 11:
				segs = append(segs, segment{R, T})
			case 6, 9:
				segs = append(segs, segment{B, T})
			case 7, 8:
				segs = append(segs, segment{L, T})
			case 5: // bottom-left and top-right above
				if centreAbove {
					segs = append(segs, segment{B, R}, segment{L, T})
				} else {
					segs = append(segs, segment{L, B}, segment{R, T})
				}
			case 10: // bottom-right and top-left above
				if centreAbove {
					segs = append(segs, segment{L, B}, segment{R, T})
				} else {
					segs = append(segs, segment{B, R}, segment{L, T})
				}
			}
		}
	}
	if len(segs) == 0 {
		return nil
	}

	// The crossing point on an edge, by linear interpolation.
	point := func(e int) [2]float64 {
		var ax, ay, bx, by int
		if e < nh {
			ay = e / (nx - 1)
			ax = e % (nx - 1)
			bx, by = ax+1, ay
		} else {
			k := e - nh
			ay = k / nx
			ax = k % nx
			bx, by = ax, ay+1
		}
		za, zb := z(ax, ay), z(bx, by)
		t := 0.5
		if zb != za {
			t = (level - za) / (zb - za)
		}
		t = max(0, min(1, t))
		return [2]float64{
			g.X[ax] + t*(g.X[bx]-g.X[ax]),
			g.Y[ay] + t*(g.Y[by]-g.Y[ay]),
		}
	}

	// Chain segments through shared edges. Each edge is shared by at most
	// two segments (the two cells on either side).
	byEdge := make(map[int][]int, 2*len(segs))
	for i, s := range segs {
		byEdge[s.a] = append(byEdge[s.a], i)
		byEdge[s.b] = append(byEdge[s.b], i)
	}
	used := make([]bool, len(segs))
	other := func(seg, edge int) int {
		for _, j := range byEdge[edge] {
			if j != seg && !used[j] {
				return j
			}
		}
		return -1
	}
	var lines []Polyline
	for start := range segs {
		if used[start] {
			continue
		}
		used[start] = true
		// Walk forward from b, then backward from a.
		fwd := []int{segs[start].a, segs[start].b}
		for cur, edge := start, segs[start].b; ; {
			next := other(cur, edge)
			if next < 0 {
				break
			}
			used[next] = true
			if segs[next].a == edge {
				edge = segs[next].b
			} else {
				edge = segs[next].a
			}
			cur = next
			fwd = append(fwd, edge)
		}
		closed := len(fwd) > 2 && fwd[len(fwd)-1] == fwd[0]
		var back []int
		if !closed {
			for cur, edge := start, segs[start].a; ; {
				next := other(cur, edge)
				if next < 0 {
					break
				}
				used[next] = true
				if segs[next].a == edge {
					edge = segs[next].b
				} else {
					edge = segs[next].a
				}
				cur = next
				back = append(back, edge)
			}
		}
		edges := make([]int, 0, len(back)+len(fwd))
		for i := len(back) - 1; i >= 0; i-- {
			edges = append(edges, back[i])
		}
		edges = append(edges, fwd...)
		if closed {
			edges = edges[:len(edges)-1]
		}
		pts := make([][2]float64, len(edges))
		for i, e := range edges {
			pts[i] = point(e)
		}
		lines = append(lines, Polyline{Points: pts, Closed: closed})
	}
	return lines
}

// PolygonArea returns the absolute area enclosed by a closed polyline (the
// shoelace formula).
func PolygonArea(pts [][2]float64) float64 {
	var a float64
	for i := range pts {
		j := (i + 1) % len(pts)
		a += pts[i][0]*pts[j][1] - pts[j][0]*pts[i][1]
	}
	return math.Abs(a) / 2
}
