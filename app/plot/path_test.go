package plot

import (
	"math"
	"math/rand/v2"
	"strconv"
	"testing"
)

// TestCoordMatchesStrconv checks the path's number writer against Go's
// strconv (an independent implementation of the shortest form): a value
// rounded to hundredths and written with FormatFloat(..., 'f', -1, 64),
// negative zero as "0".
func TestCoordMatchesStrconv(t *testing.T) {
	want := func(v float64) string {
		s := strconv.FormatFloat(math.Round(v*100)/100, 'f', -1, 64)
		if s == "-0" {
			return "0"
		}
		return s
	}
	vals := []float64{0, math.Copysign(0, -1), -0.001, 0.004999, 0.005, -0.005, 0.01, 0.1, 0.15, 1, 1.5, 12.34, -12.345, 99.995,
		480, -480.5, 1e9 + 0.25, -1e10 + 0.5, 1e10, 3e12, math.Inf(1), math.Inf(-1), math.NaN(), 123456.789}
	r := rand.New(rand.NewPCG(1, 2))
	for range 200000 {
		// Plot coordinates (0 to 500), and values over many magnitudes.
		vals = append(vals, r.Float64()*520-10, (r.Float64()-0.5)*math.Pow(10, float64(r.IntN(14)-3)))
	}
	for _, v := range vals {
		if got := string(appendCoord(nil, v)); got != want(v) {
			t.Fatalf("coordinate %v: %q, want %q", v, got, want(v))
		}
	}
}

// decodePath reads path data as an SVG renderer does (the grammar of SVG
// 1.1, section 8.3: a command letter, then coordinate pairs, repeated
// pairs after M and l being further lines; numbers separated by a space or
// by their own minus sign) for the commands Path writes, M, L, l and Z, and
// returns the subpaths' absolute points.
func decodePath(t *testing.T, d string) [][][2]float64 {
	t.Helper()
	var out [][][2]float64
	var cmd byte
	var x, y float64
	i := 0
	number := func() float64 {
		for i < len(d) && d[i] == ' ' {
			i++
		}
		j := i
		if j < len(d) && d[j] == '-' {
			j++
		}
		for j < len(d) && (d[j] >= '0' && d[j] <= '9' || d[j] == '.') {
			j++
		}
		v, err := strconv.ParseFloat(d[i:j], 64)
		if err != nil {
			t.Fatalf("path %q: no number at %d", d, i)
		}
		i = j
		return v
	}
	for i < len(d) {
		switch c := d[i]; c {
		case 'M', 'L', 'l', 'Z':
			cmd = c
			i++
			if c == 'M' {
				out = append(out, nil)
			}
			if c == 'Z' {
				continue
			}
		case ' ':
			i++
			continue
		}
		if cmd == 'Z' {
			t.Fatalf("path %q: numbers after Z at %d", d, i)
		}
		a, b := number(), number()
		switch cmd {
		case 'M', 'L':
			x, y = a, b
		case 'l':
			x, y = x+a, y+b
		}
		if cmd == 'M' {
			cmd = 'L' // pairs after a move are lines
		}
		out[len(out)-1] = append(out[len(out)-1], [2]float64{x, y})
	}
	return out
}

// TestPathDrawsTheRoundedPoints: the relative steps of a path, read back as
// a renderer reads them, land on every point rounded to hundredths (no
// drift over hundreds of steps), across gaps, closes and huge values.
func TestPathDrawsTheRoundedPoints(t *testing.T) {
	r := rand.New(rand.NewPCG(3, 4))
	round := func(v float64) float64 { return math.Round(v*100) / 100 }
	for trial := range 200 {
		var p Path
		var want [][][2]float64
		x, y := r.Float64()*400, r.Float64()*300
		for k := range 1 + r.IntN(4) {
			var sub [][2]float64
			for range 1 + r.IntN(400) {
				x += (r.Float64() - 0.5) * 6
				y += (r.Float64() - 0.5) * 6
				if trial%50 == 0 && r.IntN(100) == 0 {
					x = 1e13 // beyond the hundredths' short path
				}
				p.LineTo(x, y)
				want := [2]float64{round(x), round(y)}
				if x == 1e13 {
					want[0] = x
				}
				sub = append(sub, want)
				if x == 1e13 {
					x = 100
				}
			}
			want = append(want, sub)
			if k%2 == 0 {
				p.Close()
			} else {
				p.Lift()
			}
		}
		got := decodePath(t, p.String())
		if len(got) != len(want) {
			t.Fatalf("trial %d: %d subpaths, want %d (%q)", trial, len(got), len(want), p.String())
		}
		for s := range want {
			if len(got[s]) != len(want[s]) {
				t.Fatalf("trial %d subpath %d: %d points, want %d", trial, s, len(got[s]), len(want[s]))
			}
			for i := range want[s] {
				if math.Abs(got[s][i][0]-want[s][i][0]) > 1e-6 || math.Abs(got[s][i][1]-want[s][i][1]) > 1e-6 {
					t.Fatalf("trial %d subpath %d point %d: %v, want %v", trial, s, i, got[s][i], want[s][i])
				}
			}
		}
	}
}
