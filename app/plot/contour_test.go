package plot

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// bivariateNormal is the closed-form density of a centred bivariate normal
// with covariance [[a, b], [b, c]].
func bivariateNormal(cov []float64, x, y float64) float64 {
	a, b, c := cov[0], cov[1], cov[3]
	det := a*c - b*b
	q := (c*x*x - 2*b*x*y + a*y*y) / det
	return math.Exp(-q/2) / (2 * math.Pi * math.Sqrt(det))
}

// gaussianGrid samples a bivariate normal density on a square grid.
func gaussianGrid(cov []float64, half float64, n int) Grid {
	g := Grid{X: make([]float64, n), Y: make([]float64, n), Z: make([]float64, n*n)}
	for i := range n {
		g.X[i] = -half + 2*half*float64(i)/float64(n-1)
		g.Y[i] = g.X[i]
	}
	for iy := range n {
		for ix := range n {
			g.Z[iy*n+ix] = bivariateNormal(cov, g.X[ix], g.Y[iy])
		}
	}
	return g
}

func TestContourOfGaussianLiesAtMahalanobisRadius(t *testing.T) {
	// The contour of a bivariate normal density through Mahalanobis radius r
	// is the ellipse x' S^-1 x = r^2, enclosing mass 1 - exp(-r^2/2) and area
	// pi r^2 sqrt(det S) (closed forms of the bivariate normal).
	cov := []float64{1.0, 0.6, 0.6, 0.8}
	g := gaussianGrid(cov, 5, 121)
	det := cov[0]*cov[3] - cov[1]*cov[2]
	peak := bivariateNormal(cov, 0, 0)
	var chol mat.Cholesky
	if !chol.Factorize(mat.NewSymDense(2, cov)) {
		t.Fatal("not positive definite")
	}
	var inv mat.SymDense
	if err := chol.InverseTo(&inv); err != nil {
		t.Fatal(err)
	}
	for _, r := range []float64{1, 2, 3} {
		level := peak * math.Exp(-r*r/2)
		lines := Contour(g, level)
		if len(lines) != 1 || !lines[0].Closed {
			t.Fatalf("r=%g: want one closed line, got %d lines", r, len(lines))
		}
		for _, p := range lines[0].Points {
			x := mat.NewVecDense(2, []float64{p[0], p[1]})
			m := math.Sqrt(mat.Inner(x, &inv, x))
			// Linear interpolation along edges of width 1/12: a few
			// thousandths of the radius.
			if math.Abs(m-r) > 0.01*r {
				t.Errorf("r=%g: contour point %v at Mahalanobis radius %g", r, p, m)
				break
			}
		}
		wantArea := math.Pi * r * r * math.Sqrt(det)
		if a := PolygonArea(lines[0].Points); math.Abs(a-wantArea) > 0.01*wantArea {
			t.Errorf("r=%g: area %g, want %g", r, a, wantArea)
		}
	}
}

func TestContourOpenAtGridEdgeAndSaddle(t *testing.T) {
	// A plane z = x crosses the grid in one straight open line at x = 0.25.
	g := Grid{X: []float64{0, 0.5, 1}, Y: []float64{0, 1, 2}}
	for range 3 {
		for ix := range 3 {
			g.Z = append(g.Z, g.X[ix])
		}
	}
	lines := Contour(g, 0.25)
	if len(lines) != 1 || lines[0].Closed || len(lines[0].Points) != 3 {
		t.Fatalf("plane: got %+v", lines)
	}
	for _, p := range lines[0].Points {
		if math.Abs(p[0]-0.25) > 1e-12 {
			t.Errorf("plane contour point %v, want x = 0.25", p)
		}
	}
	// A saddle cell: two opposite corners high; the centre mean decides.
	s := Grid{X: []float64{0, 1}, Y: []float64{0, 1}, Z: []float64{1, 0, 0, 1}}
	if n := len(Contour(s, 0.4)); n != 2 {
		t.Errorf("saddle: %d lines, want 2", n)
	}
	// NaN corners are skipped rather than drawn through.
	s.Z[0] = math.NaN()
	if n := len(Contour(s, 0.4)); n != 0 {
		t.Errorf("NaN cell: %d lines, want 0", n)
	}
}

// BenchmarkContour301 traces one level of a correlated Gaussian on a
// 301 by 301 grid, the size of the engine's default 2-D grid.
func BenchmarkContour301(b *testing.B) {
	g := gaussianGrid([]float64{1.0, 0.6, 0.6, 0.8}, 5, 301)
	level := bivariateNormal([]float64{1.0, 0.6, 0.6, 0.8}, 0, 0) * math.Exp(-0.5)
	b.ResetTimer()
	for range b.N {
		Contour(g, level)
	}
}
