package engine

import (
	"context"
	"encoding/json"
	"errors"
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"bellcheck/engine/model"
)

// gauss2dSrc is a correlated normal density: mean (1, -1), covariance
// [[1, 0.6], [0.6, 2]] (testdata/reference/gauss2d.txt).
const gauss2dSrc = `param x
param y
-(2*(x - 1)^2 - 1.2*(x - 1)*(y + 1) + (y + 1)^2)/(2*1.64)
`

var (
	gauss2dMean = []float64{1, -1}
	gauss2dCov  = [][]float64{{1, 0.6}, {0.6, 2}}
)

// klGauss is KL(N(m0, S0) || N(m1, S1)) in closed form:
// (tr(S1⁻¹S0) + (m1-m0)'S1⁻¹(m1-m0) - d + log det S1 - log det S0) / 2
// (the standard formula for two multivariate normals).
func klGauss(m0 []float64, s0 [][]float64, m1 []float64, s1 [][]float64) float64 {
	d := len(m0)
	a, b := symFromRows(s0), symFromRows(s1)
	var cb, ca mat.Cholesky
	if !cb.Factorize(b) || !ca.Factorize(a) {
		panic("not positive definite")
	}
	var inv mat.SymDense
	if err := cb.InverseTo(&inv); err != nil {
		panic(err)
	}
	var prod mat.Dense
	prod.Mul(&inv, a)
	dm := mat.NewVecDense(d, nil)
	for i := range m0 {
		dm.SetVec(i, m1[i]-m0[i])
	}
	return 0.5 * (mat.Trace(&prod) + mat.Inner(dm, &inv, dm) - float64(d) + cb.LogDet() - ca.LogDet())
}

// A candidate equal to the exact posterior of a Gaussian target scores KL
// 0 both ways, Hellinger 0, no mean error, sd ratio 1 and coverage 0.95
// (closed form: q = p).
func TestCandidateEqualToExact(t *testing.T) {
	opts := Options{Candidates: []Candidate{{Name: "exact_by_hand", Mean: gauss2dMean, Cov: gauss2dCov}}}
	res := analyseSource(t, gauss2dSrc, opts)
	if len(res.Candidates) != 1 || res.Candidates[0].Fit == nil {
		t.Fatalf("candidates %+v", res.Candidates)
	}
	c := res.Candidates[0].Fit
	for name, v := range map[string]float64{"KL(q||p)": c.KLqp, "KL(p||q)": c.KLpq, "Hellinger": c.Hellinger} {
		if !(math.Abs(v) < 1e-5) {
			t.Errorf("%s = %g, want 0", name, v)
		}
	}
	if math.Abs(c.Coverage95-0.95) > 2e-3 {
		t.Errorf("coverage %g, want 0.95", c.Coverage95)
	}
	for k := 0; k < 2; k++ {
		if math.Abs(c.MeanErrSD[k]) > 1e-4 || math.Abs(c.SDRatio[k]-1) > 1e-4 {
			t.Errorf("parameter %d: mean error %g sd, sd ratio %g; want 0 and 1", k, c.MeanErrSD[k], c.SDRatio[k])
		}
		// The interval is mean ± 1.959964 sd (normal quantile, A&S 26.2).
		sd := math.Sqrt(gauss2dCov[k][k])
		want := [2]float64{gauss2dMean[k] - 1.959963984540054*sd, gauss2dMean[k] + 1.959963984540054*sd}
		if math.Abs(c.Interval95[k][0]-want[0]) > 1e-9 || math.Abs(c.Interval95[k][1]-want[1]) > 1e-9 {
			t.Errorf("interval %v, want %v", c.Interval95[k], want)
		}
	}
}

// A shifted and stretched candidate's KL(q||p) and KL(p||q) agree with the
// closed-form KL between two normals (the target is exactly Gaussian).
func TestCandidateShiftedKL(t *testing.T) {
	mean := []float64{1.5, -0.2}
	cov := [][]float64{{0.7, -0.1}, {-0.1, 2.5}}
	res := analyseSource(t, gauss2dSrc, Options{Candidates: []Candidate{{Name: "shifted", Mean: mean, Cov: cov}}})
	c := res.Candidates[0].Fit
	wantQP := klGauss(mean, cov, gauss2dMean, gauss2dCov)
	wantPQ := klGauss(gauss2dMean, gauss2dCov, mean, cov)
	if math.Abs(c.KLqp-wantQP) > 1e-4*wantQP {
		t.Errorf("KL(q||p) = %.8g, closed form %.8g", c.KLqp, wantQP)
	}
	if math.Abs(c.KLpq-wantPQ) > 1e-4*wantPQ {
		t.Errorf("KL(p||q) = %.8g, closed form %.8g", c.KLpq, wantPQ)
	}
	// Mean error in exact sds: (1.5 - 1)/1 and (-0.2 + 1)/sqrt(2) (closed form).
	if math.Abs(c.MeanErrSD[0]-0.5) > 1e-4 || math.Abs(c.MeanErrSD[1]-0.8/math.Sqrt2) > 1e-4 {
		t.Errorf("mean errors %v", c.MeanErrSD)
	}
	if math.Abs(c.SDRatio[0]-math.Sqrt(0.7)) > 1e-4 || math.Abs(c.SDRatio[1]-math.Sqrt(1.25)) > 1e-4 {
		t.Errorf("sd ratios %v", c.SDRatio)
	}
}

// A candidate equal to a fit scores exactly what the fit scores: the
// comparison treats both alike (identity: same Gaussian, same numbers).
func TestCandidateEqualToFit(t *testing.T) {
	src := "param x\n2*x - exp(x)\n" // the log of a gamma(2) variable: skewed, unbounded
	res := analyseSource(t, src, Options{})
	for _, m := range []Method{Laplace, ReverseKL, ForwardKL} {
		f := res.Fits[m]
		if f == nil {
			t.Fatalf("no %s fit", m)
		}
		opts := Options{Candidates: []Candidate{{Name: "copy", Mean: f.FittingScale.Mean, Cov: f.FittingScale.Cov}}}
		res2 := analyseSource(t, src, opts)
		c := res2.Candidates[0].Fit
		for name, pair := range map[string][2]float64{
			"KL(q||p)": {c.KLqp, f.KLqp}, "KL(p||q)": {c.KLpq, f.KLpq}, "Hellinger": {c.Hellinger, f.Hellinger},
			"coverage": {c.Coverage95, f.Coverage95}, "mean error": {c.MeanErrSD[0], f.MeanErrSD[0]},
			"sd ratio": {c.SDRatio[0], f.SDRatio[0]}, "interval lo": {c.Interval95[0][0], f.Interval95[0][0]},
		} {
			if !(pair[0] == pair[1]) && !(math.IsInf(pair[0], 1) && math.IsInf(pair[1], 1)) {
				t.Errorf("%s: candidate %s %.17g, fit %.17g", m, name, pair[0], pair[1])
			}
		}
	}
}

// Bad candidates are errors of the options that say which and what.
func TestCandidateErrors(t *testing.T) {
	m, err := model.Parse(gauss2dSrc)
	if err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name string
		c    Candidate
		want string
	}{
		{"wrong size", Candidate{Name: "a", Mean: []float64{1}, Cov: [][]float64{{1}}}, "the mean has 1 entries"},
		{"short row", Candidate{Name: "a", Mean: []float64{1, 2}, Cov: [][]float64{{1, 0}, {0}}}, "row 2"},
		{"non-finite", Candidate{Name: "a", Mean: []float64{math.NaN(), 2}, Cov: gauss2dCov}, "not a finite number"},
		{"infinite cov", Candidate{Name: "a", Mean: gauss2dMean, Cov: [][]float64{{1, math.Inf(1)}, {math.Inf(1), 1}}}, "not a finite number"},
		{"singular", Candidate{Name: "a", Mean: gauss2dMean, Cov: [][]float64{{1, 1}, {1, 1}}}, "strictly between -1 and 1"},
		{"not positive definite", Candidate{Name: "a", Mean: gauss2dMean, Cov: [][]float64{{1, 0}, {0, -1}}}, "variance of y"},
		{"asymmetric", Candidate{Name: "a", Mean: gauss2dMean, Cov: [][]float64{{1, 0.2}, {0.3, 1}}}, "not symmetric"},
		{"method's name", Candidate{Name: "laplace", Mean: gauss2dMean, Cov: gauss2dCov}, "fit method"},
		{"bad name", Candidate{Name: "my guess", Mean: gauss2dMean, Cov: gauss2dCov}, "name"},
	}
	for _, tc := range cases {
		_, err := Analyse(context.Background(), m, Options{Candidates: []Candidate{tc.c}}, nil)
		if !errors.Is(err, ErrOptions) || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%s: error %v, want ErrOptions with %q", tc.name, err, tc.want)
		}
	}
	// A 3-d correlation matrix with every pair below 1 that is still not
	// positive definite: pairwise -0.6 (the eigenvalue 1 - 2*0.6 < 0).
	m3, _ := model.Parse("param a\nparam b\nparam c\n-(a^2+b^2+c^2)/2\n")
	bad := CandidateFromSD("c3", []float64{0, 0, 0}, []float64{1, 1, 1}, [][]float64{{1, -0.6, -0.6}, {-0.6, 1, -0.6}, {-0.6, -0.6, 1}})
	if _, err := Analyse(context.Background(), m3, Options{Candidates: []Candidate{bad}}, nil); !errors.Is(err, ErrOptions) || !strings.Contains(err.Error(), "not positive definite") {
		t.Errorf("indefinite correlations: error %v", err)
	}
	// On a log scale a candidate is refused: it is a normal on the original scale.
	mg, _ := model.Parse("param a in [0, inf]\nld_gamma(a, 3, 2)\n")
	_, err = Analyse(context.Background(), mg, Options{Params: []ParamOptions{{Scale: Log}},
		Candidates: []Candidate{{Name: "g", Mean: []float64{1}, Cov: [][]float64{{1}}}}}, nil)
	if !errors.Is(err, ErrOptions) || !strings.Contains(err.Error(), "log scale") {
		t.Errorf("log scale: error %v", err)
	}
}

// The candidates reach the JSON (keyed by name, in order) and the plots.
func TestCandidateJSONAndPlots(t *testing.T) {
	opts := Options{Plots: true, Candidates: []Candidate{
		{Name: "zeta", Mean: gauss2dMean, Cov: gauss2dCov},
		CandidateFromSD("alpha", []float64{0, 0}, []float64{1, 2}, nil),
	}}
	res := analyseSource(t, gauss2dSrc, opts)
	raw, err := json.Marshal(res)
	if err != nil {
		t.Fatal(err)
	}
	s := string(raw)
	zi, ai := strings.Index(s, `"zeta":{`), strings.Index(s, `"alpha":{`)
	if zi < 0 || ai < 0 || zi > ai {
		t.Errorf("candidates not keyed in order: %d %d", zi, ai)
	}
	var doc map[string]any
	if err := json.Unmarshal(raw, &doc); err != nil {
		t.Fatal(err)
	}
	if _, ok := lookup(doc, "candidates.alpha.kl_q_p"); !ok {
		t.Errorf("no candidates.alpha.kl_q_p in the JSON")
	}
	mg := res.Plots.Marginals[0]
	if len(mg.Candidates) != 2 || len(mg.Candidates[1]) != len(mg.X) {
		t.Fatalf("marginal candidates %d", len(mg.Candidates))
	}
	// alpha's x-marginal is N(0, 1): its density at x is exp(-x²/2)/sqrt(2π).
	for i, x := range mg.X {
		want := math.Exp(-x*x/2) / math.Sqrt(2*math.Pi)
		if math.Abs(mg.Candidates[1][i]-want) > 1e-12 {
			t.Fatalf("alpha marginal at %g: %g, want %g", x, mg.Candidates[1][i], want)
		}
	}
	if len(res.Plots.Pairs[0].CandidateEllipses) != 2 || len(res.Plots.Pairs[0].CandidateEllipses[0][0]) == 0 {
		t.Errorf("no candidate ellipses")
	}
	if apps := res.Approximations(); len(apps) != NumMethods+2 || apps[NumMethods].Label != "zeta" || !apps[NumMethods+1].Candidate {
		t.Errorf("approximations %+v", apps)
	}
}
