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
