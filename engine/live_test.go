package engine

import (
	"context"
	"errors"
	"math"
	"strings"
	"testing"

	"bellcheck/engine/model"
)

// Setting a Gaussian's sd constant with model.WithConstant changes log Z
// to log(sd sqrt(2 pi)) at each value (closed form: the integral of
// exp(-x²/(2 sd²))).
func TestWithConstantSweep(t *testing.T) {
	m, err := model.Parse("sd = 1\nparam x\n-x^2/(2*sd^2)\n")
	if err != nil {
		t.Fatal(err)
	}
	for _, sd := range []float64{0.25, 1, 3.5} {
		m2, err := model.WithConstant(m, "sd", sd)
		if err != nil {
			t.Fatal(err)
		}
		res, err := Analyse(context.Background(), m2, Options{Vary: []Vary{{Name: "sd", Lo: 0.1, Hi: 5}}}, nil)
		if err != nil {
			t.Fatal(err)
		}
		want := math.Log(sd * math.Sqrt(2*math.Pi))
		if math.Abs(res.Exact.LogZ-want) > 1e-7 {
			t.Errorf("sd %g: log Z %.10g, want %.10g", sd, res.Exact.LogZ, want)
		}
		if len(res.Live) != 1 || res.Live[0].Value != sd || res.Live[0].Lo != 0.1 || res.Live[0].Hi != 5 {
			t.Errorf("live %+v", res.Live)
		}
	}
	// The original model is unchanged.
	if v, err := m.Constant("sd"); err != nil || v != 1 {
		t.Errorf("original sd %g, %v", v, err)
	}
}

// Only a scalar constant can vary: a parameter, a vector, a definition
// that depends on the parameters or calls a function are refused, as are
// empty ranges.
func TestVaryErrors(t *testing.T) {
	m, err := model.Parse("k = 2\nv = [1, 2]\nf = exp(1)\nparam x\ng = x^2\n-g/k - sum(v)*f\n")
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		v    Vary
		want string
	}{
		{Vary{"x", 0, 1}, "parameter"},
		{Vary{"v", 0, 1}, "vector"},
		{Vary{"g", 0, 1}, "depends on the parameters"},
		{Vary{"f", 0, 1}, "not a plain number"},
		{Vary{"nope", 0, 1}, "no constant"},
		{Vary{"k", 2, 1}, "range"},
		{Vary{"k", 0, math.Inf(1)}, "range"},
	} {
		_, err := Analyse(context.Background(), m, Options{Vary: []Vary{tc.v}}, nil)
		if !errors.Is(err, ErrOptions) || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%+v: %v, want %q", tc.v, err, tc.want)
		}
	}
	if _, err := model.WithConstant(m, "k", math.NaN()); err == nil {
		t.Errorf("NaN value accepted")
	}
	// A support bound that uses the constant follows its new value.
	mb, err := model.Parse("hi = 1\nparam p in [0, hi]\n0*p\n")
	if err != nil {
		t.Fatal(err)
	}
	mb2, err := model.WithConstant(mb, "hi", 4)
	if err != nil {
		t.Fatal(err)
	}
	if mb2.Params[0].Hi != 4 || mb.Params[0].Hi != 1 {
		t.Errorf("support %g (was %g)", mb2.Params[0].Hi, mb.Params[0].Hi)
	}
}

// A cost model's modes carry J = -log p on the original scale, also on a
// log fitting scale (closed form: J = (a - 2)²/2 + 3 at the reported a).
func TestModeCost(t *testing.T) {
	src := "param a in [0, inf]\ncost (a - 2)^2/2 + 3\n"
	for _, sc := range []Scale{Identity, Log} {
		res := analyseSource(t, src, Options{Params: []ParamOptions{{Scale: sc}}})
		if len(res.Modes) == 0 || res.Modes[0].Cost == nil {
			t.Fatalf("%s: no cost at the mode: %+v", sc, res.Modes)
		}
		a := res.Modes[0].X[0]
		want := (a-2)*(a-2)/2 + 3
		if math.Abs(*res.Modes[0].Cost-want) > 1e-9 {
			t.Errorf("%s: J %g at a = %g, want %g", sc, *res.Modes[0].Cost, a, want)
		}
	}
	if res := analyseSource(t, "param x\n-x^2/2\n", Options{}); res.Modes[0].Cost != nil {
		t.Errorf("cost reported for a log-density model")
	}
}

// The two curvatures: for a Gaussian target they agree (ratio 1: the
// Hessian is constant); for a Student-t target -H(x) = (nu+1)(nu-x²)/(nu+x²)²
// is largest at the mode, so its average under any q is smaller and the
// reverse-KL Gaussian is wider (closed form of the t log-density's second
// derivative).
func TestCurvatures(t *testing.T) {
	res := analyseSource(t, gauss2dSrc, Options{})
	c := res.Curvature
	if c == nil {
		t.Fatal("no curvature comparison")
	}
	if math.Abs(c.RatioMin-1) > 1e-6 || math.Abs(c.RatioMax-1) > 1e-6 || !strings.Contains(c.Summary, "nearly the same spread") {
		t.Errorf("Gaussian: %+v", c)
	}
	res = analyseSource(t, "param x\n-2.5*log(1 + x^2/4)\n", Options{}) // Student t, nu = 4
	c = res.Curvature
	if c == nil {
		t.Fatal("no curvature comparison for the t")
	}
	if !(c.RatioMax < 1) || !strings.Contains(c.Summary, "wider than the Laplace one") {
		t.Errorf("Student t: %+v", c)
	}
	// The ratio is the reverse-KL precision over the Laplace one, and the
	// Laplace precision is (nu+1)/nu = 1.25 at 0 (closed form).
	if math.Abs(c.AtMode[0][0]-1.25) > 1e-9 || math.Abs(c.RatioMin-c.Averaged[0][0]/1.25) > 1e-9 {
		t.Errorf("Student t matrices %+v", c)
	}
	// Both fits' sds follow: sd ratio = 1/sqrt(curvature ratio).
	lap, rev := res.Fits[Laplace], res.Fits[ReverseKL]
	if math.Abs(rev.SD[0]/lap.SD[0]-1/math.Sqrt(c.RatioMin)) > 1e-6 {
		t.Errorf("sd ratio %g, curvature ratio %g", rev.SD[0]/lap.SD[0], c.RatioMin)
	}
}

// generalisedEigenRange against a hand-solved 2-by-2 case: A = diag(2, 3),
// B = diag(4, 1) gives the eigenvalues 2/4 and 3/1 (closed form).
func TestGeneralisedEigenRange(t *testing.T) {
	lo, hi, ok := generalisedEigenRange([][]float64{{2, 0}, {0, 3}}, [][]float64{{4, 0}, {0, 1}})
	if !ok || math.Abs(lo-0.5) > 1e-12 || math.Abs(hi-3) > 1e-12 {
		t.Errorf("got %g %g %v", lo, hi, ok)
	}
	// A = B: every ratio 1.
	b := [][]float64{{2, 0.5}, {0.5, 1}}
	lo, hi, _ = generalisedEigenRange(b, b)
	if math.Abs(lo-1) > 1e-12 || math.Abs(hi-1) > 1e-12 {
		t.Errorf("A = B: %g %g", lo, hi)
	}
}
