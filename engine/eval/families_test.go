package eval

import (
	"fmt"
	"math"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// familyCase evaluates ld_NAME(x, p...) with every argument a parameter and
// compares it with an independent log-density.
type familyCase struct {
	name   string
	params int // arguments after x
	ref    func(x float64, p []float64) float64
	xs     []float64
	ps     [][]float64
	source string
}

var familyCases = []familyCase{
	{"ld_normal", 2, func(x float64, p []float64) float64 {
		return distuv.Normal{Mu: p[0], Sigma: p[1]}.LogProb(x)
	}, []float64{-3, -0.4, 0, 1.7, 6}, [][]float64{{0, 1}, {1.5, 0.3}, {-2, 4}}, "gonum distuv.Normal"},
	{"ld_student", 3, func(x float64, p []float64) float64 {
		return distuv.StudentsT{Nu: p[0], Mu: p[1], Sigma: p[2]}.LogProb(x)
	}, []float64{-3, -0.4, 0, 1.7, 6}, [][]float64{{1, 0, 1}, {3.5, 1.5, 0.3}, {30, -2, 4}, {0.5, 0, 2}}, "gonum distuv.StudentsT"},
	{"ld_cauchy", 2, func(x float64, p []float64) float64 {
		return distuv.StudentsT{Nu: 1, Mu: p[0], Sigma: p[1]}.LogProb(x)
	}, []float64{-3, -0.4, 0, 1.7, 60}, [][]float64{{0, 1}, {1.5, 0.3}, {-2, 4}}, "gonum distuv.StudentsT with Nu = 1"},
	{"ld_laplace", 2, func(x float64, p []float64) float64 {
		return distuv.Laplace{Mu: p[0], Scale: p[1]}.LogProb(x)
	}, []float64{-3, -0.4, 0.1, 1.7, 6}, [][]float64{{0, 1}, {1.5, 0.3}, {-2, 4}}, "gonum distuv.Laplace"},
	{"ld_logistic", 2, func(x float64, p []float64) float64 {
		// Closed form: density e^-z / (s (1 + e^-z)^2), z = (x - mu)/s
		// (Johnson, Kotz and Balakrishnan, Continuous Univariate
		// Distributions vol. 2, ch. 23, from memory). gonum's Logistic
		// LogProb ignores its location and scale, so it is no reference.
		z := (x - p[0]) / p[1]
		return -z - math.Log(p[1]) - 2*math.Log1p(math.Exp(-z))
	}, []float64{-3, -0.4, 0, 1.7, 6}, [][]float64{{0, 1}, {1.5, 0.3}, {-2, 4}}, "closed form"},
	{"ld_gamma", 2, func(x float64, p []float64) float64 {
		return distuv.Gamma{Alpha: p[0], Beta: p[1]}.LogProb(x)
	}, []float64{0.01, 0.4, 1, 2.7, 16}, [][]float64{{1, 1}, {0.5, 2}, {7.5, 0.3}}, "gonum distuv.Gamma (rate parameterisation)"},
	{"ld_invgamma", 2, func(x float64, p []float64) float64 {
		// Closed form: b^a / Gamma(a) x^-(a+1) e^(-b/x) (Johnson, Kotz and
		// Balakrishnan vol. 1, ch. 17, from memory); also checked against
		// gonum's distuv.InverseGamma below.
		lg, _ := math.Lgamma(p[0])
		return p[0]*math.Log(p[1]) - lg - (p[0]+1)*math.Log(x) - p[1]/x
	}, []float64{0.01, 0.4, 1, 2.7, 16}, [][]float64{{1, 1}, {0.5, 2}, {7.5, 0.3}}, "closed form"},
	{"ld_invgamma", 2, func(x float64, p []float64) float64 {
		return distuv.InverseGamma{Alpha: p[0], Beta: p[1]}.LogProb(x)
	}, []float64{0.01, 0.4, 1, 2.7, 16}, [][]float64{{1, 1}, {0.5, 2}, {7.5, 0.3}}, "gonum distuv.InverseGamma"},
	{"ld_beta", 2, func(x float64, p []float64) float64 {
		return distuv.Beta{Alpha: p[0], Beta: p[1]}.LogProb(x)
	}, []float64{0.001, 0.2, 0.5, 0.77, 0.999}, [][]float64{{1, 1}, {0.5, 2}, {7.5, 0.3}, {3, 3}}, "gonum distuv.Beta"},
	{"ld_exponential", 1, func(x float64, p []float64) float64 {
		return distuv.Exponential{Rate: p[0]}.LogProb(x)
	}, []float64{0, 0.4, 1, 2.7, 16}, [][]float64{{1}, {0.5}, {7.5}}, "gonum distuv.Exponential"},
	{"ld_poisson", 1, func(x float64, p []float64) float64 {
		return distuv.Poisson{Lambda: p[0]}.LogProb(x)
	}, []float64{0, 1, 2, 7, 30}, [][]float64{{1}, {0.5}, {7.5}, {40}}, "gonum distuv.Poisson"},
	{"ld_binomial", 2, func(x float64, p []float64) float64 {
		return distuv.Binomial{N: p[0], P: p[1]}.LogProb(x)
	}, []float64{0, 1, 2, 7, 10}, [][]float64{{10, 0.5}, {12, 0.03}, {40, 0.9}}, "gonum distuv.Binomial"},
	{"ld_lognormal", 2, func(x float64, p []float64) float64 {
		return distuv.LogNormal{Mu: p[0], Sigma: p[1]}.LogProb(x)
	}, []float64{0.01, 0.4, 1, 2.7, 16}, [][]float64{{0, 1}, {1.5, 0.3}, {-2, 4}}, "gonum distuv.LogNormal"},
}

func TestFamiliesAgainstReferences(t *testing.T) {
	names := []string{"x", "p", "q", "r"}
	for _, c := range familyCases {
		// Every argument a parameter, so the derivatives in all of them are
		// checked too.
		args := names[:c.params+1]
		src := ""
		for _, n := range args {
			src += "param " + n + "\n"
		}
		src += c.name + "("
		for i, n := range args {
			if i > 0 {
				src += ", "
			}
			src += n
		}
		src += ")\n"
		ev := compileSrc(t, src)
		for _, p := range c.ps {
			for _, x := range c.xs {
				pt := append([]float64{x}, p...)
				want := c.ref(x, p)
				got := ev.LogDensity(pt)
				if !near(got, want, 1e-12, 1) {
					t.Errorf("%s%v = %.16g, %s gives %.16g", c.name, pt, got, c.source, want)
				}
				// Derivatives in every argument, away from the kinks and
				// support edges finite differences cannot straddle.
				discrete := c.name == "ld_poisson" || c.name == "ld_binomial"
				if c.name == "ld_exponential" && x == 0 || discrete && x == 0 {
					continue
				}
				if c.name == "ld_binomial" && x == p[0] || c.name == "ld_beta" && (x < 0.01 || x > 0.99) {
					continue
				}
				fdCheck(t, fmt.Sprintf("%s%v", c.name, pt), ev, pt, 2e-6)
			}
		}
	}
}

func TestFamiliesOutsideSupport(t *testing.T) {
	// Each family is -Inf outside its support (the supports in
	// model.Funcs' documentation) and NaN for a NaN argument.
	inf := math.Inf(-1)
	cases := []struct {
		src  string
		pts  [][]float64
		want float64
	}{
		{"param x\nparam s\nld_normal(x, 0, s)", [][]float64{{1, 0}, {1, -1}}, inf},
		{"param x\nparam n\nld_student(x, n, 0, 1)", [][]float64{{1, 0}, {1, -2}}, inf},
		{"param x\nparam s\nld_student(x, 3, 0, s)", [][]float64{{1, 0}, {1, -2}}, inf},
		{"param x\nparam s\nld_cauchy(x, 0, s)", [][]float64{{1, 0}}, inf},
		{"param x\nparam s\nld_laplace(x, 0, s)", [][]float64{{1, -1}}, inf},
		{"param x\nparam s\nld_logistic(x, 0, s)", [][]float64{{1, 0}}, inf},
		{"param x\nparam a\nld_gamma(x, a, 1)", [][]float64{{0, 2}, {-1, 2}, {1, 0}, {1, -1}}, inf},
		{"param x\nparam a\nld_gamma(x, 2, a)", [][]float64{{1, 0}}, inf},
		{"param x\nparam a\nld_invgamma(x, a, 1)", [][]float64{{0, 2}, {-1, 2}, {1, 0}}, inf},
		{"param x\nparam a\nld_beta(x, a, 2)", [][]float64{{0, 2}, {1, 2}, {1.5, 2}, {-0.5, 2}, {0.5, 0}}, inf},
		{"param x\nparam r\nld_exponential(x, r)", [][]float64{{-0.1, 1}, {1, 0}}, inf},
		{"param k\nparam r\nld_poisson(k, r)", [][]float64{{-1, 1}, {1, -0.5}}, inf},
		{"param k\nparam p\nld_binomial(k, 10, p)", [][]float64{{-1, 0.5}, {11, 0.5}, {3, -0.1}, {3, 1.1}}, inf},
		{"param x\nparam s\nld_lognormal(x, 0, s)", [][]float64{{0, 1}, {-1, 1}, {1, 0}}, inf},
		{"param x\nparam s\nld_normal(x, 0, s)", [][]float64{{math.NaN(), 1}, {1, math.NaN()}}, math.NaN()},
		{"param x\nparam s\nld_gamma(x, 2, s)", [][]float64{{math.NaN(), 1}}, math.NaN()},
	}
	for _, c := range cases {
		ev := compileSrc(t, c.src)
		for _, p := range c.pts {
			got := ev.LogDensity(p)
			v, g, h := derivs(ev, p)
			if !near(got, c.want, 0, 1) || !near(v, c.want, 0, 1) {
				t.Errorf("%q at %v = %v (with derivatives %v), want %v", c.src, p, got, v, c.want)
			}
			if !math.IsNaN(g[0]) || !math.IsNaN(h[0][0]) {
				t.Errorf("%q at %v: gradient %v, Hessian %v, want NaN outside the support", c.src, p, g, h)
			}
		}
		blockMatches(t, c.src, ev, c.pts)
	}
	// Edges that are inside: 0 log 0 = 0 (a count of 0 with rate 0 or p = 0
	// has probability 1), x = 0 for the exponential.
	edges := []struct {
		src  string
		x    []float64
		want float64
	}{
		{"param k\nparam r\nld_poisson(k, r)", []float64{0, 0}, 0},
		{"param k\nparam p\nld_binomial(k, 10, p)", []float64{0, 0}, 0},
		{"param k\nparam p\nld_binomial(k, 10, p)", []float64{10, 1}, 0},
		{"param x\nparam r\nld_exponential(x, r)", []float64{0, 2}, math.Log(2)},
	}
	for _, e := range edges {
		ev := compileSrc(t, e.src)
		if got := ev.LogDensity(e.x); !near(got, e.want, 1e-15, 1) {
			t.Errorf("%q at %v = %v, want %v", e.src, e.x, got, e.want)
		}
	}
}

func TestFamiliesOverData(t *testing.T) {
	// Sums of a family over a data vector, with the parameters in the
	// family's parameters, against the sum of gonum's LogProb.
	y := []float64{0.3, 1.2, 2.5, 0.8, 4.1, 1.9, 0.05, 3.3}
	k := []float64{0, 3, 1, 4, 2, 0, 7, 1}
	data := "y = " + vectorLiteral(y) + "\nk = " + vectorLiteral(k) + "\n"
	cases := []struct {
		src string
		pts [][]float64
		ref func(p []float64) float64
	}{
		{"param m\nparam s\nsum(ld_normal(y, m, s))", [][]float64{{1, 1}, {2, 0.5}}, func(p []float64) float64 {
			var s float64
			for _, v := range y {
				s += distuv.Normal{Mu: p[0], Sigma: p[1]}.LogProb(v)
			}
			return s
		}},
		{"param a\nparam b\nsum(ld_gamma(y, a, b))", [][]float64{{1, 1}, {2, 0.5}}, func(p []float64) float64 {
			var s float64
			for _, v := range y {
				s += distuv.Gamma{Alpha: p[0], Beta: p[1]}.LogProb(v)
			}
			return s
		}},
		{"param r\nsum(ld_poisson(k, r))", [][]float64{{1}, {2.5}}, func(p []float64) float64 {
			var s float64
			for _, v := range k {
				s += distuv.Poisson{Lambda: p[0]}.LogProb(v)
			}
			return s
		}},
		{"param p\nsum(ld_binomial(k, 8, p))", [][]float64{{0.2}, {0.7}}, func(p []float64) float64 {
			var s float64
			for _, v := range k {
				s += distuv.Binomial{N: 8, P: p[0]}.LogProb(v)
			}
			return s
		}},
		{"param n\nparam m\nparam s\nsum(ld_student(y, n, m, s))", [][]float64{{3, 1, 1}, {10, 2, 0.5}}, func(p []float64) float64 {
			var s float64
			for _, v := range y {
				s += distuv.StudentsT{Nu: p[0], Mu: p[1], Sigma: p[2]}.LogProb(v)
			}
			return s
		}},
		{"param m\nparam s\nsum(ld_lognormal(y, m, s)) + sum(ld_laplace(y, m, s))", [][]float64{{0.1, 1}, {0.5, 0.5}}, func(p []float64) float64 {
			var s float64
			for _, v := range y {
				s += distuv.LogNormal{Mu: p[0], Sigma: p[1]}.LogProb(v) + distuv.Laplace{Mu: p[0], Scale: p[1]}.LogProb(v)
			}
			return s
		}},
	}
	for _, c := range cases {
		ev := compileSrc(t, data+c.src)
		for _, p := range c.pts {
			want := c.ref(p)
			if got := ev.LogDensity(p); !near(got, want, 1e-12, 1) {
				t.Errorf("%s at %v = %.16g, gonum gives %.16g", c.src, p, got, want)
			}
			fdCheck(t, c.src, ev, p, 2e-6)
		}
		blockMatches(t, c.src, ev, c.pts)
	}
}
