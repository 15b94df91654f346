package engine

import (
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

// TestCoverageByMonteCarlo checks every fit's reported coverage (the
// exact mass inside its central 95 % region) on reference cases whose
// exact posterior can be sampled directly: the correlated 3-D normal and
// the 4-D chain of normals (by their generative form), Neal's funnel in
// 2-D and 3-D (v ~ N(0, 3), x ~ N(0, exp(v/2))). Two million draws each:
// a Monte Carlo standard error of at most 3.6e-4, and the tolerance is
// five of them. Fits whose coverage comes from the nodes and those whose
// coverage comes from the rule over their own region (a mean-field fit
// across a correlation, the 3-D funnel's Laplace fit) alike.
func TestCoverageByMonteCarlo(t *testing.T) {
	if testing.Short() {
		t.Skip("two million draws per case")
	}
	cases := []struct {
		file string
		draw func(*rand.Rand, []float64)
	}{
		{"corr3d.txt", func(r *rand.Rand, x []float64) {
			// Precision (I - a 11') / 0.01 with a = 0.33221476510067116:
			// the covariance is 0.01 (I + b 11'), b = a / (1 - 3a)
			// (Sherman-Morrison).
			a := 0.33221476510067116
			common := r.NormFloat64() * math.Sqrt(a/(1-3*a))
			for k := range x {
				x[k] = 0.1 * (r.NormFloat64() + common)
			}
		}},
		{"gauss4d.txt", func(r *rand.Rand, p []float64) {
			x := r.NormFloat64()
			y := 0.5*x + 1 + 0.8*r.NormFloat64()
			z := -0.6*y + 0.5*r.NormFloat64()
			w := -0.4*x + 0.3*z + 2 + 0.7*r.NormFloat64()
			p[0], p[1], p[2], p[3] = x, y, z, w
		}},
		{"funnel2d.txt", func(r *rand.Rand, p []float64) {
			p[0] = 3 * r.NormFloat64()
			p[1] = math.Exp(p[0]/2) * r.NormFloat64()
		}},
		{"funnel3d.txt", func(r *rand.Rand, p []float64) {
			p[0] = 3 * r.NormFloat64()
			p[1] = math.Exp(p[0]/2) * r.NormFloat64()
			p[2] = math.Exp(p[0]/2) * r.NormFloat64()
		}},
	}
	const n = 2000000
	for _, c := range cases {
		src, err := os.ReadFile(filepath.Join("..", "testdata", "reference", c.file))
		if err != nil {
			t.Fatal(err)
		}
		res := analyseSource(t, string(src), Options{})
		d := len(res.Params)
		r0 := distuv.ChiSquared{K: float64(d)}.Quantile(0.95)
		type region struct {
			name string
			mean []float64
			prec *mat.SymDense
			want float64
			in   int
		}
		var regions []*region
		for m, f := range res.Fits {
			if f == nil || math.IsNaN(f.Coverage95) {
				continue
			}
			cov := mat.NewSymDense(d, nil)
			for i := 0; i < d; i++ {
				for j := 0; j <= i; j++ {
					cov.SetSym(i, j, f.FittingScale.Cov[i][j])
				}
			}
			var ch mat.Cholesky
			if !ch.Factorize(cov) {
				t.Fatalf("%s %s: covariance not positive definite", c.file, Method(m))
			}
			prec := mat.NewSymDense(d, nil)
			if err := ch.InverseTo(prec); err != nil {
				t.Fatal(err)
			}
			regions = append(regions, &region{name: Method(m).String(), mean: f.FittingScale.Mean, prec: prec, want: f.Coverage95})
		}
		if len(regions) == 0 {
			t.Errorf("%s: no fit reports a coverage", c.file)
			continue
		}
		rng := rand.New(rand.NewPCG(1, uint64(len(c.file))))
		x := make([]float64, d)
		dx := make([]float64, d)
		for i := 0; i < n; i++ {
			c.draw(rng, x)
			for _, rg := range regions {
				for a := 0; a < d; a++ {
					dx[a] = x[a] - rg.mean[a]
				}
				m2 := 0.0
				for a := 0; a < d; a++ {
					for b := 0; b < d; b++ {
						m2 += dx[a] * rg.prec.At(a, b) * dx[b]
					}
				}
				if m2 <= r0 {
					rg.in++
				}
			}
		}
		for _, rg := range regions {
			got := float64(rg.in) / n
			se := math.Sqrt(max(got*(1-got), 1e-6) / n)
			t.Logf("%s %s: coverage %.5f, Monte Carlo %.5f (se %.1g)", c.file, rg.name, rg.want, got, se)
			if math.Abs(got-rg.want) > 5*se {
				t.Errorf("%s %s: coverage %.5f, Monte Carlo %.5f +- %.1g", c.file, rg.name, rg.want, got, se)
			}
		}
	}
}

// TestCoverageOfFiveReadings: a location from five readings under a
// Student-t likelihood (3 dof, scale 0.5; one reading far out), whose
// rule has a few dozen nodes: every fit reports its coverage, against an
// independent trapezoid of the posterior (200,000 intervals over [-20, 25],
// with the region's ends as nodes of their own).
func TestCoverageOfFiveReadings(t *testing.T) {
	ys := []float64{1.2, 0.8, 1.1, 7.5, 0.9}
	src := "y = [1.2, 0.8, 1.1, 7.5, 0.9]\nparam m\nsum(ld_student(y, 3, m, 0.5))\n"
	res := analyseSource(t, src, Options{})
	logp := func(m float64) float64 {
		s := 0.0
		for _, y := range ys {
			z := (y - m) / 0.5
			s += -2 * math.Log1p(z*z/3)
		}
		return s
	}
	trapezoid := func(a, b float64, n int) float64 {
		h := (b - a) / float64(n)
		s := 0.5 * (math.Exp(logp(a)) + math.Exp(logp(b)))
		for i := 1; i < n; i++ {
			s += math.Exp(logp(a + float64(i)*h))
		}
		return s * h
	}
	total := trapezoid(-20, 25, 200000)
	half := math.Sqrt(distuv.ChiSquared{K: 1}.Quantile(0.95))
	for m, f := range res.Fits {
		if f == nil {
			continue
		}
		mu, sd := f.FittingScale.Mean[0], f.FittingScale.SD[0]
		want := trapezoid(mu-half*sd, mu+half*sd, 20000) / total
		t.Logf("%s: coverage %.6f, trapezoid %.6f", Method(m), f.Coverage95, want)
		if math.IsNaN(f.Coverage95) || math.Abs(f.Coverage95-want) > 1e-4 {
			t.Errorf("%s: coverage %.6f, want %.6f", Method(m), f.Coverage95, want)
		}
	}
}
