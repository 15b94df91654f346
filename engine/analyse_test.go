package engine

import (
	"context"
	"encoding/json"
	"errors"
	"math"
	"strings"
	"testing"
	"time"

	"gonum.org/v1/gonum/integrate/quad"
	"gonum.org/v1/gonum/mat"

	"bellcheck/engine/eval"
	"bellcheck/engine/model"
	"bellcheck/engine/target"
	"bellcheck/engine/transform"
)

func hasCode(res *Result, code string) bool {
	for _, d := range res.Diagnostics {
		if d.Code == code {
			return true
		}
	}
	return false
}

// A Cauchy density has neither mean nor variance: the forward-KL fit and
// the exact covariance are absent, with the reasons, and the JSON carries
// nulls; the Laplace fit at the mode (curvature -2 at 0: variance 1/2,
// closed form) still exists.
func TestCauchyHasNoVariance(t *testing.T) {
	res := analyseSource(t, "ld_cauchy(x, 0, 1)", Options{})
	if res.Fits[ForwardKL] != nil {
		t.Errorf("forward-KL fit reported: %+v", res.Fits[ForwardKL])
	}
	// The nested rule follows the tails (no box edge to report): the
	// variance's absence is said by no_variance; on the grid alone the box
	// search also reports the mass left at its capped edges.
	if !hasCode(res, CodeNoVariance) || (!useQuadrature && !hasCode(res, CodeEdgeMass)) {
		t.Errorf("diagnostics %+v", res.Diagnostics)
	}
	if !math.IsNaN(res.Exact.Cov[0][0]) || !math.IsNaN(res.Exact.SD[0]) {
		t.Errorf("exact variance %g reported", res.Exact.Cov[0][0])
	}
	if res.Fits[Laplace] == nil || math.Abs(res.Fits[Laplace].Cov[0][0]-0.5) > 1e-9 {
		t.Errorf("Laplace fit %+v, want variance 1/2", res.Fits[Laplace])
	}
	if l := res.Fits[Laplace]; l != nil && !math.IsInf(l.KLpq, 1) {
		t.Errorf("KL(p||q) %g for a Cauchy p, want +Inf", l.KLpq)
	}
	raw, err := json.Marshal(res)
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(raw), `"forward_kl":null`) || !strings.Contains(string(raw), `"cov":[[null]]`) {
		t.Errorf("JSON lacks the nulls: %.400s", raw)
	}
}

// A density flat along x is improper: the box search says so.
func TestImproper(t *testing.T) {
	res := analyseSource(t, "param x\nparam y\n-y^2 + 0*x", Options{})
	if !hasCode(res, CodeImproper) {
		t.Errorf("no improper diagnostic: %+v", res.Diagnostics)
	}
}

func TestOptionErrors(t *testing.T) {
	m, err := model.Parse("param x in [0, inf]\nparam y\nld_gamma(x, 2, 1) - y^2")
	if err != nil {
		t.Fatal(err)
	}
	bad := []Options{
		{Params: []ParamOptions{{Scale: Logit}}},                   // logit needs [lo, hi]
		{Params: []ParamOptions{{}, {Scale: Log}}},                 // log needs a lower bound
		{Params: []ParamOptions{{Scale: "cube"}}},                  // unknown
		{Params: []ParamOptions{{Lo: ptr(-1.0)}}},                  // outside the support
		{Params: []ParamOptions{{}, {Lo: ptr(2.0), Hi: ptr(1.0)}}}, // empty
		{Params: []ParamOptions{{}, {}, {}}},                       // too many
		{Params: []ParamOptions{{Points: -3}}},
	}
	for i, o := range bad {
		if _, err := Analyse(context.Background(), m, o, nil); !errors.Is(err, ErrOptions) {
			t.Errorf("case %d: err %v, want ErrOptions", i, err)
		}
	}
	if _, err := Analyse(context.Background(), nil, Options{}, nil); !errors.Is(err, ErrNoModel) {
		t.Errorf("nil model: %v", err)
	}
}

func ptr(x float64) *float64 { return &x }

// A box the user sets is kept, and cutting off mass is reported.
func TestUserBox(t *testing.T) {
	res := analyseSource(t, "param x\n-x^2/2", Options{Params: []ParamOptions{{Lo: ptr(-1), Hi: ptr(4), Points: 401}}})
	if res.Grid.Lo[0] != -1 || res.Grid.Hi[0] != 4 || res.Grid.Points[0] != 401 {
		t.Errorf("grid %+v", res.Grid)
	}
	if !hasCode(res, CodeEdgeMass) {
		t.Errorf("no edge_mass diagnostic: %+v", res.Diagnostics)
	}
	// The normal truncated to [-1, 4]: log Z = log(sqrt(2 pi) (Phi(4) - Phi(-1))).
	want := math.Log(math.Sqrt(2*math.Pi) * 0.5 * (math.Erf(4/math.Sqrt2) - math.Erf(-1/math.Sqrt2)))
	if math.Abs(res.Exact.LogZ-want) > 1e-9 {
		t.Errorf("log Z %.12g, want %.12g (truncated normal, via math.Erf)", res.Exact.LogZ, want)
	}
}

// A box the user sets on the support's bounds cuts nothing off: the
// density ends there, so there is no edge_mass warning, and the grid
// integrates the truncated normal.
func TestUserBoxOnSupport(t *testing.T) {
	res := analyseSource(t, "param x in [-1, 4]\n-x^2/2", Options{Params: []ParamOptions{{Lo: ptr(-1), Hi: ptr(4), Points: 401}}})
	if hasCode(res, CodeEdgeMass) {
		t.Errorf("edge_mass for a box on the support's bounds: %+v", res.Diagnostics)
	}
	// The normal truncated to [-1, 4]: log Z = log(sqrt(2 pi) (Phi(4) - Phi(-1))).
	want := math.Log(math.Sqrt(2*math.Pi) * 0.5 * (math.Erf(4/math.Sqrt2) - math.Erf(-1/math.Sqrt2)))
	if math.Abs(res.Exact.LogZ-want) > 1e-6 {
		t.Errorf("log Z %.12g, want %.12g (truncated normal, via math.Erf)", res.Exact.LogZ, want)
	}
	// One side inside the support still cuts: mass at -1 is cut by the
	// user's lower side at -0.5.
	res = analyseSource(t, "param x in [-1, 4]\n-x^2/2", Options{Params: []ParamOptions{{Lo: ptr(-0.5), Hi: ptr(4), Points: 401}}})
	if !hasCode(res, CodeEdgeMass) {
		t.Errorf("no edge_mass for a box side inside the support: %+v", res.Diagnostics)
	}
}

// The JSON of a result without non-finite numbers is what encoding/json
// writes for the same struct without the MarshalJSON method; with them, the
// only change is null in their places.
func TestJSONMatchesEncodingJSON(t *testing.T) {
	res := analyseSource(t, "param x\nparam y\n-x^2/2 - (y - x)^2/2", Options{Plots: true})
	type plain Result
	want, err := json.Marshal(plain(*res))
	if err != nil {
		t.Fatal(err)
	}
	got, err := json.Marshal(res)
	if err != nil {
		t.Fatal(err)
	}
	if string(got) != string(want) {
		t.Errorf("walker and encoding/json differ:\n%.300s\n%.300s", got, want)
	}
	r := Result{Exact: Exact{LogZ: math.Inf(1), Mean: []float64{math.NaN(), 1.5}}, Fits: Fits{ForwardKL: &Fit{KLqp: math.Inf(-1)}}}
	got, err = json.Marshal(r)
	if err != nil {
		t.Fatal(err)
	}
	for _, s := range []string{`"log_z":null`, `"mean":[null,1.5]`, `"kl_q_p":null`, `"laplace":null`, `"plots"`} {
		if strings.Contains(string(got), s) != (s != `"plots"`) {
			t.Errorf("JSON %s: want %s present=%v", got, s, s != `"plots"`)
		}
	}
	var back map[string]any
	if err := json.Unmarshal(got, &back); err != nil {
		t.Errorf("not valid JSON: %v", err)
	}
}

// The plots are on the original scale: each exact marginal integrates to 1
// over its X (trapezoid rule), also for a parameter fitted on the log scale;
// contours are closed, levels fall as the mass rises.
func TestPlots(t *testing.T) {
	res := analyseSource(t, "param s in [0, inf]\nparam m\nld_gamma(s, 3, 2) + ld_normal(m, s, 0.5)",
		Options{Plots: true, Params: []ParamOptions{{Scale: Log}}})
	if res.Plots == nil || len(res.Plots.Marginals) != 2 || len(res.Plots.Pairs) != 1 {
		t.Fatalf("plots %+v", res.Plots)
	}
	for _, m := range res.Plots.Marginals {
		area := 0.0
		for i := 1; i < len(m.X); i++ {
			area += (m.X[i] - m.X[i-1]) * (m.Exact[i] + m.Exact[i-1]) / 2
		}
		if math.Abs(area-1) > 2e-3 {
			t.Errorf("marginal %d integrates to %g", m.Param, area)
		}
		if m.Fits[Laplace] == nil || m.Fits[ReverseKL] == nil || m.Fits[ForwardKL] == nil || len(m.Fits[Laplace]) != len(m.X) {
			t.Errorf("marginal %d: missing fit curves", m.Param)
		}
	}
	p := res.Plots.Pairs[0]
	if !(p.Levels[0] > p.Levels[1] && p.Levels[1] > p.Levels[2] && p.Levels[2] > 0) {
		t.Errorf("levels %v", p.Levels)
	}
	if len(p.Density) != len(p.X)*len(p.Y) {
		t.Errorf("image %d values for %d x %d", len(p.Density), len(p.X), len(p.Y))
	}
	for name, e := range p.Ellipses {
		for _, line := range e {
			if len(line) < 3 || line[0] != line[len(line)-1] {
				t.Errorf("%s: contour not closed", name)
			}
			for _, pt := range line {
				if pt[0] <= 0 {
					t.Errorf("%s: contour point %v outside s > 0 (the log scale maps inside)", name, pt)
					break
				}
			}
		}
	}
}

// Cancelling from inside the progress callback stops the analysis, which
// returns the context's error; progress fractions rise from 0 to 1.
func TestCancelAndProgress(t *testing.T) {
	src := "ld_normal(a, 0, 1) + ld_normal(b, a, 1) + ld_normal(c, b, 1) + ld_normal(d, c, 1)"
	m, err := model.Parse(src)
	if err != nil {
		t.Fatal(err)
	}
	last := -1.0
	calls := 0
	_, err = Analyse(context.Background(), m, Options{Params: []ParamOptions{{Points: 21}, {Points: 21}, {Points: 21}, {Points: 21}}}, func(p Progress) {
		if p.Fraction < last || p.Fraction > 1 {
			t.Errorf("fraction %g after %g", p.Fraction, last)
		}
		last = p.Fraction
		calls++
	})
	if err != nil || last != 1 || calls < 3 {
		t.Errorf("err %v, last fraction %g, %d calls", err, last, calls)
	}
	for _, stopAt := range []float64{0.02, 0.3, 0.6, 0.9} {
		ctx, cancel := context.WithCancel(context.Background())
		var at time.Time
		res, err := Analyse(ctx, m, Options{}, func(p Progress) {
			if p.Fraction >= stopAt && at.IsZero() {
				at = time.Now()
				cancel()
			}
		})
		cancel()
		if !errors.Is(err, context.Canceled) || res != nil {
			t.Errorf("stop at %g: err %v", stopAt, err)
			continue
		}
		// A loose bound (the machine is shared); BenchmarkCancelLatency
		// measures it.
		if d := time.Since(at); d > time.Second {
			t.Errorf("stop at %g: returned %v after the cancel", stopAt, d)
		}
	}
}

// The reverse-KL fit's stationarity conditions E_q[grad log p] = 0 and
// Sigma^-1 = -E_q[Hessian log p] (Opper and Archambeau 2009) hold when the
// expectations are computed independently, by a tensor Gauss-Hermite rule
// of 60 nodes per axis (gonum's quad.Hermite) on the compiled density, to
// 1e-8 in units of the fit's standard deviations.
func TestReverseKLStationarity(t *testing.T) {
	cases := []struct {
		name string
		opts Options
		tol  float64
	}{
		{"student", Options{}, 1e-8},
		{"banana", Options{}, 1e-8},
		{"gamma_log", Options{Params: []ParamOptions{{Scale: Log}}}, 1e-8},
		{"beta_logit", Options{Params: []ParamOptions{{Scale: Logit}}}, 1e-8},
		// Not the mixture: there the fit sits on the heavier component and
		// the 20-node rule the fit uses does not resolve the other one, 4.5
		// sd away, where log p bends sharply; against 60 nodes the
		// precision condition was off by 1.7e-3 (measured), a limit of the
		// fit's cubature order.
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			src := readRef(t, c.name)
			res := analyseSource(t, src, c.opts)
			f := res.Fits[ReverseKL]
			if f == nil {
				t.Fatal("no reverse-KL fit")
			}
			m, _ := model.Parse(src)
			ev, err := eval.Compile(m)
			if err != nil {
				t.Fatal(err)
			}
			var p target.Density = ev
			maps := make([]transform.Map, len(m.Params))
			for i, prm := range m.Params {
				maps[i] = transform.Map{Scale: Identity, Lo: prm.Lo, Hi: prm.Hi}
				if i < len(c.opts.Params) && c.opts.Params[i].Scale != "" {
					maps[i].Scale = c.opts.Params[i].Scale
				}
			}
			if p, err = transform.Wrap(ev, maps); err != nil {
				t.Fatal(err)
			}
			// The normal on the fitting scale, where the stationarity holds.
			fs := f.FittingScale
			eg, eh := gaussHermiteDerivs(p, fs.Mean, fs.Cov, 60)
			d := len(fs.Mean)
			prec := mat.NewSymDense(d, nil)
			for i := 0; i < d; i++ {
				for j := i; j < d; j++ {
					prec.SetSym(i, j, f.Precision[i][j])
				}
			}
			cov := symFromRows(fs.Cov)
			var inv mat.SymDense
			var ch mat.Cholesky
			ch.Factorize(cov)
			_ = ch.InverseTo(&inv)
			for i := 0; i < d; i++ {
				// In units of the fit's sd: E[grad]_i * sd_i.
				if r := eg[i] * math.Sqrt(fs.Cov[i][i]); math.Abs(r) > c.tol {
					t.Errorf("E_q[grad log p][%d] * sd = %.3g", i, r)
				}
				for j := 0; j < d; j++ {
					r := (inv.At(i, j) + eh[i*d+j]) * math.Sqrt(fs.Cov[i][i]*fs.Cov[j][j])
					if math.Abs(r) > c.tol {
						t.Errorf("(Sigma^-1 + E_q[H])[%d][%d] scaled = %.3g", i, j, r)
					}
				}
			}
		})
	}
}

func readRef(t *testing.T, name string) string {
	for _, c := range loadReferences(t) {
		if c.name == name {
			return c.src
		}
	}
	t.Fatalf("no reference %s", name)
	return ""
}

// gaussHermiteDerivs returns E_q[grad log p] and E_q[Hessian log p] under
// q = N(mean, cov) by a tensor Gauss-Hermite rule of n nodes per axis.
func gaussHermiteDerivs(p target.Density, mean []float64, cov [][]float64, n int) ([]float64, []float64) {
	d := len(mean)
	u := make([]float64, n)
	w := make([]float64, n)
	quad.Hermite{}.FixedLocations(u, w, math.Inf(-1), math.Inf(1))
	var ch mat.Cholesky
	ch.Factorize(symFromRows(cov))
	var L mat.TriDense
	ch.LTo(&L)
	total := 1
	for i := 0; i < d; i++ {
		total *= n
	}
	eg := make([]float64, d)
	eh := make([]float64, d*d)
	x := make([]float64, d)
	g := make([]float64, d)
	h := make([]float64, d*d)
	idx := make([]int, d)
	for k := 0; k < total; k++ {
		rem := k
		wt := math.Pow(math.Pi, -float64(d)/2)
		for i := d - 1; i >= 0; i-- {
			idx[i] = rem % n
			rem /= n
			wt *= w[idx[i]]
		}
		for i := 0; i < d; i++ {
			s := mean[i]
			for j := 0; j <= i; j++ {
				s += L.At(i, j) * math.Sqrt2 * u[idx[j]]
			}
			x[i] = s
		}
		p.LogDensityDerivs(x, g, h)
		for i := range g {
			eg[i] += wt * g[i]
		}
		for i := range h {
			eh[i] += wt * h[i]
		}
	}
	return eg, eh
}

// Diagnostics on small models whose trouble is known in closed form.
func TestDiagnosticCases(t *testing.T) {
	cases := []struct {
		name, src string
		opts      Options
		want      []string
		absent    func(*Result) bool
	}{
		// The exponential density has its mode on the bound 0: fitted as it
		// is (not on its default log scale), no Laplace fit.
		{"mode on bound", "param x in [0, inf]\n-x", Options{Params: []ParamOptions{{Scale: Identity}}}, []string{CodeModeOnBound, CodeInfiniteKL},
			func(r *Result) bool { return r.Fits[Laplace] == nil }},
		// sqrt of a negative number is NaN: half of the line is undefined.
		{"non-finite", "param x\n-(sqrt(x) - 1)^2*4 - x^2/50", Options{}, []string{CodeNonFinite}, nil},
		// Student t with 3 degrees of freedom: variance 3 but the fourth
		// moment is infinite; the variance converges slowly with the box.
		{"heavy tails", "ld_student(x, 3, 0, 1)", Options{}, []string{CodeHeavyTails}, nil},
		// Two well separated, equal modes.
		{"two modes", "param x\nlogsumexp(ld_normal(x, -4, 1), ld_normal(x, 4, 1))", Options{}, []string{CodeSeveralModes}, nil},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			res := analyseSource(t, c.src, c.opts)
			for _, code := range c.want {
				if !hasCode(res, code) {
					t.Errorf("no %s: %+v", code, res.Diagnostics)
				}
			}
			if c.absent != nil && !c.absent(res) {
				t.Errorf("a fit that should be absent is there")
			}
		})
	}
}
