package figure

import (
	"encoding/xml"
	"io"
	"math"
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
