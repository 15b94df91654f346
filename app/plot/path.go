package plot

import (
	"math"
	"strconv"
	"strings"
)

// Path builds SVG path data with coordinates rounded to two decimals,
// which is below a pixel's hundredth at any zoom used here. A subpath
// starts with an absolute move ("M x y") and goes on by relative lines
// ("l dx dy dx dy ..."), each step the difference of the rounded points, so
// the points drawn are the rounded points exactly, with no drift. The steps
// are shorter to write than the points (a contour's points are a few
// units apart: a pair figure's path data 25 KB as points, 19 KB as steps),
// and the page parses every figure's SVG.
type Path struct {
	b      strings.Builder
	pen    bool  // a subpath is open
	rel    bool  // the open subpath is in relative lines ("l" written)
	lx, ly int64 // the pen's position, in hundredths
	exact  bool  // the pen's position is in lx, ly (not huge or non-finite)
}

// MoveTo starts a new subpath at (x, y).
func (p *Path) MoveTo(x, y float64) {
	p.b.WriteByte('M')
	p.pair(x, y)
	p.pen, p.rel = true, false
	p.penAt(x, y)
}

// LineTo draws a line to (x, y), or starts a subpath if none is open.
func (p *Path) LineTo(x, y float64) {
	if !p.pen {
		p.MoveTo(x, y)
		return
	}
	if !p.exact || !finiteHundredths(x) || !finiteHundredths(y) {
		p.b.WriteByte('L')
		p.pair(x, y)
		p.rel = false
		p.penAt(x, y)
		return
	}
	nx, ny := hundredths(x), hundredths(y)
	var buf [48]byte
	b := buf[:0]
	if !p.rel {
		b = append(b, 'l')
		p.rel = true
	} else if nx-p.lx >= 0 {
		b = append(b, ' ') // a minus sign separates numbers by itself
	}
	b = AppendHundredths(b, nx-p.lx)
	if ny-p.ly >= 0 {
		b = append(b, ' ')
	}
	b = AppendHundredths(b, ny-p.ly)
	p.b.Write(b)
	p.lx, p.ly = nx, ny
}

// Close closes the current subpath.
func (p *Path) Close() {
	if p.pen {
		p.b.WriteByte('Z')
	}
	p.pen, p.rel = false, false
}

// Lift ends the current subpath without closing it: the next LineTo starts a
// new one (a gap in the line).
func (p *Path) Lift() { p.pen, p.rel = false, false }

// penAt records the pen's position after an absolute point.
func (p *Path) penAt(x, y float64) {
	p.lx, p.ly, p.exact = hundredths(x), hundredths(y), finiteHundredths(x) && finiteHundredths(y)
}

// hundredths is v in whole hundredths, as the path writes it.
func hundredths(v float64) int64 {
	if !finiteHundredths(v) {
		return 0
	}
	return int64(math.Round(v * 100))
}

// finiteHundredths reports whether v is written as whole hundredths
// (appendCoord's short path).
func finiteHundredths(v float64) bool { return math.Abs(math.Round(v*100)) < 1e12 }

// String returns the path data.
func (p *Path) String() string { return p.b.String() }

// Empty reports whether nothing was drawn.
func (p *Path) Empty() bool { return p.b.Len() == 0 }

func (p *Path) pair(x, y float64) {
	var buf [64]byte
	b := appendCoord(buf[:0], x)
	b = append(b, ' ')
	b = appendCoord(b, y)
	p.b.Write(b)
}

// appendCoord appends v rounded to two decimals in its shortest form, as
// strconv.FormatFloat(math.Round(v*100)/100, 'f', -1, 64) writes it but
// with "0" for a negative zero. Below 1e10 it writes the digits of the
// whole hundredths directly: the figures' paths hold thousands of numbers,
// and the shortest-form search of strconv is slow in WebAssembly.
func appendCoord(b []byte, v float64) []byte {
	r := math.Round(v * 100)
	if !(math.Abs(r) < 1e12) { // huge, infinite or NaN
		s := strconv.FormatFloat(r/100, 'f', -1, 64)
		if s == "-0" {
			s = "0"
		}
		return append(b, s...)
	}
	return AppendHundredths(b, int64(r))
}

// AppendHundredths appends n/100 in decimal without trailing zeros (1234:
// "12.34", 150: "1.5", -5: "-0.05", 0: "0"). For |n| below 2^46 this is
// the shortest form of the float64 nearest n/100: any other decimal with at
// most two decimals lies at least 0.01 away, beyond the float's spacing.
func AppendHundredths(b []byte, n int64) []byte {
	if n < 0 {
		b = append(b, '-')
		n = -n
	}
	b = strconv.AppendInt(b, n/100, 10)
	switch f := byte(n % 100); {
	case f == 0:
	case f%10 == 0:
		b = append(b, '.', '0'+f/10)
	default:
		b = append(b, '.', '0'+f/10, '0'+f%10)
	}
	return b
}

// Curve returns the path of the points (xs[i], ys[i]) mapped through sx and
// sy; non-finite values break the line. Values beyond the y range are clamped
// to two units outside it, so a curve cannot run far off the plot.
func Curve(xs, ys []float64, sx, sy Linear) string {
	var p Path
	n := min(len(xs), len(ys))
	lo, hi := min(sy.R0, sy.R1), max(sy.R0, sy.R1)
	for i := range n {
		x, y := xs[i], ys[i]
		if math.IsNaN(x) || math.IsNaN(y) || math.IsInf(x, 0) || math.IsInf(y, 0) {
			p.Lift()
			continue
		}
		ry := max(lo-2, min(hi+2, sy.At(y)))
		p.LineTo(sx.At(x), ry)
	}
	return p.String()
}

// Outline returns the path of a polyline given in data coordinates, closed
// when closed is true.
func Outline(pts [][2]float64, closed bool, sx, sy Linear) string {
	var p Path
	for _, q := range pts {
		if math.IsNaN(q[0]) || math.IsNaN(q[1]) || math.IsInf(q[0], 0) || math.IsInf(q[1], 0) {
			p.Lift()
			continue
		}
		p.LineTo(sx.At(q[0]), sy.At(q[1]))
	}
	if closed {
		p.Close()
	}
	return p.String()
}
