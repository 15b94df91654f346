package eval

import (
	"math"
	"os"
	"path/filepath"
	"testing"

	"bellcheck/engine/model"
)

// FuzzCompile compiles any model the front end accepts and evaluates it at
// a few points: nothing may panic, block evaluation must equal point
// evaluation, and the value with derivatives must agree with the value.
func FuzzCompile(f *testing.F) {
	files, _ := filepath.Glob("../../testdata/model/valid/*.txt")
	for _, name := range files {
		if src, err := os.ReadFile(name); err == nil {
			f.Add(string(src))
		}
	}
	for _, src := range []string{
		bananaSrc,
		"param x\nparam y\nmin(x, y) + max(x^2, 1) + logsumexp(x, y, 0)",
		"v = [1, 2, 3]\nparam a\nsum(ld_gamma(v, a, 2)) + logsumexp(a*v) - max(v*a)",
		"param a in [0, 1]\nparam b\nld_beta(a, 2, 3) + ld_student(b, 3, a, 1) + ld_binomial(3, 10, a)",
		"param x\ncost x^x + 2^x + x^-3 + x^0.5 + lgamma(x) + digamma(x)",
		"y = [1, 2, 3, 4]\nidx = [1, 3]\nsq(u) = u^2\nsum(sq(y[idx] - a)) + y[2]*b + sum(y[2:4])*a + (a*y)[3]",
		"u = [1, 0, 1]\nrepeat 3 as k\n  f = u[k]*b\n  x = a then x*0.9 + f\n  y = 0 then y + x*k\nend\nsum(ld_normal(u, x, 1)) + max(y) + logsumexp(x) - min(x)",
		"tt = [0.5, 1]\node tt from 0 substeps 4 as t\n  s = x + y\n  x = a rate -b*s + sin(t)\n  y = 0 rate s\nend\nsum(x*y) + mean(x^2)",
		"t = [0.1, 0.2]\nparam x0\nparam y0\nparam z0\node t from 0 substeps 2\n  x = x0 rate 10*(y - x)\n  y = y0 rate x*(28 - z) - y\n  z = z0 rate x*y - 8/3*z\nend\nxo = [1, 2]\ncost sum((x - xo)^2) + x0^2 + y0^2 + z0^2",
		"k = [1, 2]\nn = [3, 3]\nrepeat 2\n  e = a then e + b\nend\nsum(ld_binomial(k, n, logistic(e))) + ld_binomial(k, n, logistic(e))[2]",
		// Loops of different lengths reading the same parameter.
		"t = [4.1, 6.2, 8.3, 10.9]\ntc = [12, 13]\nparam k\nparam lam in [0, inf]\nsum((t/lam)^k) - sum((tc/lam)^k) + sum(log(t*lam))",
	} {
		f.Add(src)
	}
	f.Fuzz(func(t *testing.T, src string) {
		m, err := model.Parse(src)
		if err != nil {
			return
		}
		ev, err := Compile(m)
		if err != nil {
			if _, ok := err.(*Error); !ok {
				t.Fatalf("compile error of type %T: %v", err, err)
			}
			return
		}
		d := ev.Dim()
		pts := [][]float64{}
		for _, v := range []float64{0, 0.5, -1.3, 2.7, math.Inf(1), math.NaN()} {
			x := make([]float64, d)
			for k := range x {
				x[k] = v + 0.1*float64(k)
			}
			pts = append(pts, x)
		}
		blockMatches(t, src, ev, pts)
		g := make([]float64, d)
		h := make([]float64, d*d)
		for _, x := range pts {
			v := ev.LogDensity(x)
			w := ev.LogDensityDerivs(x, g, h)
			if !near(w, v, 1e-9, 1) && !(math.IsNaN(v) && math.IsNaN(w)) && !(math.IsInf(v, 0) && math.IsInf(w, 0)) {
				t.Errorf("%q at %v: value %v, with derivatives %v", src, x, v, w)
			}
		}
	})
}
