package figure

import (
	"encoding/xml"
	"io"
	"math"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"bellcheck/app/plot"
	"bellcheck/engine"
	"bellcheck/engine/gauss"
)

// gaussian2D builds the pair marginal of a standard bivariate normal with
// correlation rho on [-4, 4]^2, with the closed-form levels: the superlevel
// set enclosing mass p is the ellipse of Mahalanobis radius
// sqrt(-2 log(1-p)), where the density is peak*(1-p).
func gaussian2D(rho float64, n int) *engine.Marginal2D {
	p := &engine.Marginal2D{I: 0, J: 1, X: make([]float64, n), Y: make([]float64, n), Density: make([]float64, n*n)}
	for i := range n {
		p.X[i] = -4 + 8*float64(i)/float64(n-1)
		p.Y[i] = p.X[i]
	}
	det := 1 - rho*rho
	peak := 1 / (2 * math.Pi * math.Sqrt(det))
	for iy, y := range p.Y {
		for ix, x := range p.X {
			q := (x*x - 2*rho*x*y + y*y) / det
			p.Density[iy*n+ix] = peak * math.Exp(-q/2)
		}
	}
	for k, m := range Masses {
		p.Levels[k] = peak * (1 - m)
	}
	q, err := gauss.Prepare(gauss.Gaussian{Mean: []float64{0, 0}, Cov: mat.NewSymDense(2, []float64{1, rho, rho, 1})})
	if err != nil {
		panic(err)
	}
	var lines [3][][2]float64
	for k, m := range Masses {
		lines[k] = q.Ellipse(0, 1, m, 48)
	}
	p.Ellipses = engine.Ellipses{engine.Laplace: lines}
	return p
}

func wellFormed(t *testing.T, svg string) {
	t.Helper()
	d := xml.NewDecoder(strings.NewReader(svg))
	for {
		_, err := d.Token()
		if err == io.EOF {
			return
		}
		if err != nil {
			t.Fatalf("SVG is not well-formed XML: %v", err)
		}
	}
}

func TestPairDrawsContoursAndHeat(t *testing.T) {
	p := gaussian2D(0.6, 81)
	f := Pair(p, nil, nil, Options{ID: "t", XLabel: "a<b", YLabel: "y"})
	if f == nil {
		t.Fatal("no figure")
	}
	wellFormed(t, f.SVG)
	if strings.Contains(f.SVG, "a<b") || !strings.Contains(f.SVG, "a&lt;b") {
		t.Error("axis label not escaped")
	}
	// Three exact contours plus three Laplace ellipses, in their colours.
	if n := strings.Count(f.SVG, `stroke="`+plot.StyleOf(plot.Exact).Colour+`"`); n != 3 {
		t.Errorf("%d exact contour paths, want 3", n)
	}
	if n := strings.Count(f.SVG, `stroke="`+plot.StyleOf(plot.Laplace).Colour+`"`); n != 3 {
		t.Errorf("%d Laplace paths, want 3", n)
	}
	h := f.Heat
	if h == nil || len(h.Pixels) != 4*h.Width*h.Height {
		t.Fatal("bad heat map")
	}
	// The centre pixel is the darkest (the peak), a corner is paper white.
	lum := func(col, row int) float64 {
		k := 4 * (row*h.Width + col)
		return float64(h.Pixels[k]) + float64(h.Pixels[k+1]) + float64(h.Pixels[k+2])
	}
	c := lum(h.Width/2, h.Height/2)
	if corner := lum(0, 0); corner <= c {
		t.Errorf("corner %g not lighter than centre %g", corner, c)
	}
	r, g, b := plot.Density.At(0).Bytes()
	if k := 0; h.Pixels[k] != r || h.Pixels[k+1] != g || h.Pixels[k+2] != b {
		t.Errorf("corner pixel %v, want the colour map's zero", h.Pixels[:3])
	}
	// Positive correlation: the top-right quadrant (large x, large y) is
	// darker than the top-left one.
	if lum(3*h.Width/4, h.Height/4) >= lum(h.Width/4, h.Height/4) {
		t.Error("heat map does not show the positive correlation")
	}
	// Hiding a method removes its lines.
	var o Options
	o.Hidden[plot.Laplace] = true
	if f2 := Pair(p, nil, nil, o); strings.Contains(f2.SVG, plot.StyleOf(plot.Laplace).Colour) {
		t.Error("hidden Laplace still drawn")
	}
	// Mismatched data gives no figure rather than a panic.
	bad := *p
	bad.Density = bad.Density[:10]
	if Pair(&bad, nil, nil, Options{}) != nil {
		t.Error("mismatched density accepted")
	}
}

func TestMarginalScales(t *testing.T) {
	m := &engine.Marginal1D{X: []float64{-2, -1, 0, 1, 2}}
	for _, x := range m.X {
		m.Exact = append(m.Exact, math.Exp(-x*x/2)/math.Sqrt(2*math.Pi))
		m.Fits[engine.Laplace] = append(m.Fits[engine.Laplace], math.Exp(-x*x/2)/math.Sqrt(2*math.Pi))
	}
	f := Marginal(m, Options{ID: "m", XLabel: "x"})
	if f == nil {
		t.Fatal("no figure")
	}
	wellFormed(t, f.SVG)
	// The x scale spans the data; the y scale starts at 0 and covers the peak.
	if f.X.At(-2) != f.Plot.X0 || f.X.At(2) != f.Plot.X1 {
		t.Error("x scale does not span the plot")
	}
	if f.Y.At(0) != f.Plot.Y1 || f.Y.At(1/math.Sqrt(2*math.Pi)) < f.Plot.Y0 {
		t.Error("y scale wrong")
	}
	lf := Marginal(m, Options{Log: true})
	// On the log scale the top is just above log(peak) and the floor 14 nats below.
	lp := math.Log(1 / math.Sqrt(2*math.Pi))
	if math.Abs(lf.Y.D0-(lp-logFloor)) > 1e-12 || lf.Y.D1 <= lp {
		t.Errorf("log range [%g, %g]", lf.Y.D0, lf.Y.D1)
	}
	if Marginal(&engine.Marginal1D{X: []float64{0, 1}, Exact: []float64{0, 0}}, Options{}) != nil {
		t.Error("an all-zero density should give no figure")
	}
}

func TestFracIndex(t *testing.T) {
	xs := []float64{0, 1, 3}
	for _, c := range []struct{ v, want float64 }{{-1, 0}, {0, 0}, {0.5, 0.5}, {2, 1.5}, {3, 2}, {9, 2}} {
		if got := fracIndex(xs, c.v); got != c.want {
			t.Errorf("fracIndex(%g) = %g, want %g", c.v, got, c.want)
		}
	}
}

func TestSpanOfNormalIsItsQuantiles(t *testing.T) {
	// The 2.5 % and 97.5 % quantiles of the standard normal are -+1.959964
	// (Abramowitz and Stegun, table 26.5).
	xs := make([]float64, 801)
	ys := make([]float64, len(xs))
	for i := range xs {
		xs[i] = -8 + 16*float64(i)/800
		ys[i] = math.Exp(-xs[i] * xs[i] / 2)
	}
	lo, hi, ok := span(xs, ys, 0.025)
	if !ok || math.Abs(lo+1.959964) > 2e-3 || math.Abs(hi-1.959964) > 2e-3 {
		t.Errorf("span = [%g, %g], want -+1.96", lo, hi)
	}
	// The view pads the span and stays within the grid.
	vlo, vhi := viewOf(xs, ys, nil)
	if !(vlo < -3.5 && vlo > -8) || !(vhi > 3.5 && vhi < 8) {
		t.Errorf("view [%g, %g]", vlo, vhi)
	}
}

// TestHeatMapBilinear checks the heat map's pixels against a density that
// is bilinear in x and y, which bilinear interpolation reproduces exactly
// (an identity): each pixel's colour is the colour map's entry for the
// density at the pixel's centre over the peak, within one of 255 steps
// (rounding). Pixels beyond the grid and cells at a non-finite or negative
// value follow the stated rule: no density there.
func TestHeatMapBilinear(t *testing.T) {
	dens := func(x, y float64) float64 { return 3 + x + 2*y + 0.5*x*y }
	p := &engine.Marginal2D{X: []float64{0, 0.3, 1, 1.7, 2}, Y: []float64{-1, 0, 0.5, 1}}
	for _, y := range p.Y {
		for _, x := range p.X {
			p.Density = append(p.Density, dens(x, y))
		}
	}
	peak := dens(2, 1)
	table := plot.Density.Table(256)
	// The view reaches beyond the grid on the left (x < 0).
	const w, h = 37, 23
	x0, x1, y0, y1 := -0.5, 2.0, -1.0, 1.0
	hm := HeatMap(p, w, h, x0, x1, y0, y1)
	for row := range h {
		y := y1 - (float64(row)+0.5)/h*(y1-y0)
		for col := range w {
			x := x0 + (float64(col)+0.5)/w*(x1-x0)
			want := 0
			if x >= 0 {
				want = int(math.Round(dens(x, y) / peak * 255))
			}
			got := hm.Pixels[4*(row*w+col) : 4*(row*w+col)+4]
			ok := false
			for k := max(0, want-1); k <= min(255, want+1); k++ {
				if [4]uint8(got) == table[k] {
					ok = true
				}
			}
			if !ok {
				t.Fatalf("pixel (%d, %d) at (%g, %g): colour %v, want the map's entry %d (%v)", col, row, x, y, got, want, table[want])
			}
		}
	}
	// A NaN, an infinity and a negative value count as 0: the pixels next
	// to the last row's first cell are lighter than before.
	bad := *p
	bad.Density = append([]float64(nil), p.Density...)
	bad.Density[15], bad.Density[16], bad.Density[17] = math.NaN(), math.Inf(1), -3
	hb := HeatMap(&bad, w, h, x0, x1, y0, y1)
	if hb.Pixels[4*(0*w+w/2)] == hm.Pixels[4*(0*w+w/2)] && hb.Pixels[4*(0*w+w/2)+1] == hm.Pixels[4*(0*w+w/2)+1] {
		t.Error("non-finite and negative densities did not count as 0 in the top row")
	}
}

// BenchmarkHeatMap times the heat map of a 2-D result as the page draws it
// (97 points a side, 194 pixels a side).
func BenchmarkHeatMap(b *testing.B) {
	p := gaussian2D(0.6, 97)
	for b.Loop() {
		HeatMap(p, 194, 194, -4, 4, -4, 4)
	}
}

// TestNumMatchesStrconv checks the figures' number writer against Go's
// strconv: the value rounded half away from zero to hundredths, in the
// shortest form FormatFloat(..., 'f', -1, 64) gives.
func TestNumMatchesStrconv(t *testing.T) {
	for _, v := range []float64{0, -0.004, 0.005, -0.005, 0.125, -2.675, 10, 480, 9.995, 123456.7891, -7e9, 2e10, 1e13} {
		want := strconv.FormatFloat(float64(int64(v*100+sign(v)*0.5))/100, 'f', -1, 64)
		if got := num(v); got != want {
			t.Errorf("num(%v) = %q, want %q", v, got, want)
		}
	}
	for k := range 100000 {
		v := float64(k)*0.0137 - 300
		if got, want := num(v), strconv.FormatFloat(float64(int64(v*100+sign(v)*0.5))/100, 'f', -1, 64); got != want {
			t.Fatalf("num(%v) = %q, want %q", v, got, want)
		}
	}
}
