package engine

import (
	"fmt"
	"math"
	"strings"

	"gonum.org/v1/gonum/mat"
)

// The forms FuzzAnalyse adds to its base model (fuzz_test.go) from the
// bytes left after it: a scalar constant marked to vary (and a slider's
// value at or beyond its range's ends), a function, a data vector with
// indexing, a repeat or an ode block stepped over it, sums over the vector
// that EP splits into one factor per element (flat, improper and heavy
// tailed among them), and candidate Gaussians, sound or not.

// fuzzCase is one generated analysis.
type fuzzCase struct {
	src  string
	opts Options
	// slider, when set, is the value the constant fuzzConstName is given
	// (through model.WithConstant) before the analysis.
	slider *float64
	// badOptions says why the options are unsound by construction (empty
	// when they are sound): the analysis must refuse them with ErrOptions.
	badOptions string
	// maybeBad marks options on the edge (a candidate covariance too
	// ill-conditioned to call either way): ErrOptions is allowed.
	maybeBad bool
}

// fuzzExtras are the texts the extra forms add to the model: head before
// the parameters, prelude between them and the density, term added to
// the density (a log-density term).
type fuzzExtras struct {
	head, prelude, term string
}

// fuzzConstName is the constant the generator may mark to vary.
const fuzzConstName = "kc"

var (
	fuzzConstValues = []float64{1, 0, 0.5, -2, 3, 1e3, 1e-3}
	fuzzDataValues  = []string{"1", "0", "-1", "2.5", "0.3", "3", "10", "(-4)", "1e3", "0.01"}
	fuzzTimes       = [][]float64{{0.5, 1, 1.5, 2, 2.5, 3}, {1, 2, 5, 10, 20, 40}, {0.01, 0.02, 0.03, 0.04, 0.05, 0.06}, {0, 1, 2, 3, 4, 5}}
	// The candidates' values: the first few of each list are sound, the
	// rest are not (or are on the edge: a correlation of 0.999 with sds
	// six orders of magnitude apart).
	fuzzCandMeans = []float64{0, 1, -1, 0.5, 3, 1e3, math.NaN(), math.Inf(1)}
	fuzzCandSDs   = []float64{1, 0.5, 2, 1e-3, 10, 1e3, 0, -1, math.Inf(1), 1e200}
	fuzzCandCorrs = []float64{0, 0.5, -0.9, 0.999, 1, -1, math.NaN()}
	fuzzCandNames = []string{"c1", "c2", "mine", "laplace", "c1"}
)

// extras reads the extra forms' choices (all zero: none of them) and sets
// the options they bring in fc.
func (g *exprGen) extras(fc *fuzzCase) fuzzExtras {
	c := g.c
	var x fuzzExtras
	var pre strings.Builder
	var terms []string
	var leaves []string
	// A scalar constant, maybe marked to vary, maybe moved by a slider.
	if c.pick(2) == 1 {
		val := fuzzConstValues[c.pick(len(fuzzConstValues))]
		x.head = fmt.Sprintf("%s = %v\n", fuzzConstName, val)
		leaves = append(leaves, fuzzConstName)
		if v := c.pick(6); v > 0 {
			lo := fuzzConstValues[c.pick(len(fuzzConstValues))]
			hi := lo + []float64{0, 1, 10, 1e3, 0, -1}[v]
			fc.opts.Vary = append(fc.opts.Vary, Vary{Name: fuzzConstName, Lo: lo, Hi: hi})
			if !(lo < hi) {
				fc.badOptions = "an empty range to vary"
			}
			// A slider's value: at an end, or beyond one.
			if v := c.pick(5); v > 0 {
				s := []float64{0, lo, hi, hi + 2*(hi-lo) + 1, lo - 1e6}[v]
				fc.slider = &s
			}
		}
	}
	if c.pick(16) == 15 {
		// Only a constant may vary; a parameter is refused.
		fc.opts.Vary = append(fc.opts.Vary, Vary{Name: fuzzNames[0], Lo: 0, Hi: 1})
		fc.badOptions = "a parameter to vary"
	}
	// A function of two arguments, called with parameters.
	if c.pick(2) == 1 {
		fg := &exprGen{c: c, d: 2, names: []string{"u", "v"}, leaves: leaves}
		fmt.Fprintf(&pre, "g1(u, v) = %s\n", fg.expr(3))
		call := fmt.Sprintf("g1(%s, %s)", g.param(), g.leaf())
		leaves = append(leaves, call)
		if c.pick(2) == 1 {
			terms = append(terms, call)
		}
	}
	// A data vector and what uses it.
	if kind := c.pick(6); kind > 0 {
		n := 2 + c.pick(5)
		vals := make([]string, n)
		for i := range vals {
			vals[i] = fuzzDataValues[c.pick(len(fuzzDataValues))]
		}
		fmt.Fprintf(&pre, "obs = [%s]\n", strings.Join(vals, ", "))
		switch kind {
		case 1, 5:
			terms = append(terms, g.factorSum(leaves))
			if kind == 5 {
				terms = append(terms, g.factorSum(leaves))
			}
		case 2:
			terms = append(terms, g.indexing(n))
		case 3:
			terms = append(terms, g.repeatBlock(&pre, n, leaves))
		case 4:
			terms = append(terms, g.odeBlock(&pre, n, leaves))
		}
	}
	x.prelude = pre.String()
	x.term = strings.Join(terms, " + ")
	g.candidates(fc)
	return x
}

// factorSum is a sum over the data that EP splits into one factor per
// element: a family of each element around an affine function of a
// parameter, or a flat or improper (linear) term.
func (g *exprGen) factorSum(leaves []string) string {
	c := g.c
	lin := g.param()
	if c.pick(2) == 1 {
		lin = fmt.Sprintf("%s + %s*obs", lin, g.param())
	}
	scale := fuzzConstants[c.pick(len(fuzzConstants))]
	if len(leaves) > 0 && c.pick(3) == 0 {
		scale = leaves[c.pick(len(leaves))]
	}
	switch c.pick(7) {
	case 0:
		return fmt.Sprintf("sum(ld_normal(obs, %s, %s))", lin, scale)
	case 1:
		return fmt.Sprintf("sum(ld_student(obs, %s, %s, %s))", fuzzConstants[c.pick(len(fuzzConstants))], lin, scale)
	case 2:
		return fmt.Sprintf("sum(ld_cauchy(obs, %s, %s))", lin, scale)
	case 3:
		return fmt.Sprintf("sum(ld_logistic(obs, %s, %s))", lin, scale)
	case 4:
		return fmt.Sprintf("sum(ld_laplace(obs, %s, %s))", lin, scale)
	case 5:
		return fmt.Sprintf("sum(obs*(%s))/10", lin) // improper alone
	}
	return fmt.Sprintf("sum(0*obs*(%s))", lin) // flat
}

// indexing uses elements, slices and position vectors of the data (n
// elements).
func (g *exprGen) indexing(n int) string {
	c := g.c
	i := 1 + c.pick(n)
	a := 1 + c.pick(n)
	b := a + c.pick(n-a+1)
	j := 1 + c.pick(n)
	switch c.pick(4) {
	case 0:
		return fmt.Sprintf("ld_normal(obs[%d], %s, 1)", i, g.param())
	case 1:
		return fmt.Sprintf("ld_normal(sum(obs[%d:%d]), %s, 2)", a, b, g.param())
	case 2:
		return fmt.Sprintf("sum(ld_normal(obs[[%d, %d]], %s, 1))", i, j, g.param())
	}
	return fmt.Sprintf("ld_normal(obs[len(obs)] - obs[%d], %s, 0.5)", i, g.param())
}

// stepNames are the parameters and the names a block's lines may use.
func (g *exprGen) stepGen(extra []string, leaves []string) *exprGen {
	names := append(append([]string(nil), fuzzNames[:g.d]...), extra...)
	return &exprGen{c: g.c, d: len(names), names: names, leaves: leaves}
}

// observe is a log-density term comparing a block's state s (n values)
// with the data.
func (g *exprGen) observe(s string, n int) string {
	switch g.c.pick(3) {
	case 0:
		return fmt.Sprintf("sum(ld_normal(obs, %s, 1))", s)
	case 1:
		return fmt.Sprintf("-sum((%s - obs)^2)/2", s)
	}
	return fmt.Sprintf("ld_normal(%s[%d], 0, 1)", s, n)
}

// repeatBlock writes a repeat block of n steps into pre and returns a term
// that uses its state.
func (g *exprGen) repeatBlock(pre *strings.Builder, n int, leaves []string) string {
	sg := g.stepGen([]string{"q"}, append(leaves, "obs[st]", "st"))
	fmt.Fprintf(pre, "repeat %d as st\n", n)
	fmt.Fprintf(pre, "  w = %s\n", sg.expr(2))
	sg = g.stepGen([]string{"q", "w"}, append(leaves, "obs[st]"))
	start := g.leaf()
	fmt.Fprintf(pre, "  q = %s then %s\n", start, sg.expr(2))
	fmt.Fprintf(pre, "end\n")
	return g.observe("q", n)
}

// odeBlock writes an ode block with n output times into pre and returns a
// term that uses its state.
func (g *exprGen) odeBlock(pre *strings.Builder, n int, leaves []string) string {
	c := g.c
	times := fuzzTimes[c.pick(len(fuzzTimes))][:n]
	ts := make([]string, n)
	for i, t := range times {
		ts[i] = fmt.Sprint(t)
	}
	fmt.Fprintf(pre, "tt = [%s]\n", strings.Join(ts, ", "))
	sub := []int{1, 2, 5, 10}[c.pick(4)]
	sg := g.stepGen([]string{"zs"}, append(leaves, "tm"))
	fmt.Fprintf(pre, "ode tt from 0 substeps %d as tm\n", sub)
	fmt.Fprintf(pre, "  zs = %s rate %s\n", g.leaf(), sg.expr(2))
	fmt.Fprintf(pre, "end\n")
	return g.observe("zs", n)
}

// candidates adds zero to two candidate Gaussians to fc's options, sound
// or not, and records in fc whether they must be refused.
func (g *exprGen) candidates(fc *fuzzCase) {
	c := g.c
	nc := []int{0, 0, 1, 2}[c.pick(4)]
	d := g.d
	seen := map[string]bool{}
	for i := 0; i < nc; i++ {
		// Three candidates in four take their values from the sound
		// part of each list.
		sound := c.pick(4) > 0
		from := func(n, good int) int {
			if sound {
				return c.pick(good)
			}
			return c.pick(n)
		}
		name := fuzzCandNames[from(len(fuzzCandNames), 3)]
		mean := make([]float64, d)
		sd := make([]float64, d)
		for k := 0; k < d; k++ {
			mean[k] = fuzzCandMeans[from(len(fuzzCandMeans), 6)]
			sd[k] = fuzzCandSDs[from(len(fuzzCandSDs), 6)]
		}
		corr := make([][]float64, d)
		for k := range corr {
			corr[k] = make([]float64, d)
			corr[k][k] = 1
		}
		for k := 0; k < d; k++ {
			for l := 0; l < k; l++ {
				r := fuzzCandCorrs[from(len(fuzzCandCorrs), 4)]
				corr[k][l], corr[l][k] = r, r
			}
		}
		cand := CandidateFromSD(name, mean, sd, corr)
		cand.FittingScale = c.pick(3) == 2
		fc.opts.Candidates = append(fc.opts.Candidates, cand)
		bad, edge := candidateUnsound(cand, corr, fc.opts.Params, d)
		if bad == "" && seen[name] {
			bad = "two candidates of one name"
		}
		seen[name] = true
		if bad != "" && fc.badOptions == "" {
			fc.badOptions = bad
		}
		fc.maybeBad = fc.maybeBad || edge
	}
}

// candidateUnsound says why a candidate must be refused ("" if it is
// sound), and whether it is on the edge (a covariance so ill-conditioned
// that a factorisation may fail or not). Written from the README's rules
// for candidates, with gonum's eigenvalues for definiteness.
func candidateUnsound(cand Candidate, corr [][]float64, params []ParamOptions, d int) (string, bool) {
	if cand.Name == "laplace" {
		return "a fit's name", false
	}
	if !cand.FittingScale {
		for _, p := range params {
			if p.Scale != "" && p.Scale != Identity {
				return "a candidate on the original scale for a parameter on another", false
			}
		}
	}
	for k := 0; k < d; k++ {
		if math.IsNaN(cand.Mean[k]) || math.IsInf(cand.Mean[k], 0) {
			return "a mean that is not finite", false
		}
		for l := 0; l < d; l++ {
			v := cand.Cov[k][l]
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return "a covariance that is not finite", false
			}
		}
		if !(cand.Cov[k][k] > 0) {
			return "a variance that is not positive", false
		}
		for l := 0; l < k; l++ {
			if !(math.Abs(corr[k][l]) < 1) {
				return "a correlation of one", false
			}
		}
	}
	// Definiteness: the eigenvalues of the covariance, relative to the
	// largest.
	cov := mat.NewSymDense(d, nil)
	for k := 0; k < d; k++ {
		for l := k; l < d; l++ {
			cov.SetSym(k, l, cand.Cov[k][l])
		}
	}
	var eig mat.EigenSym
	if !eig.Factorize(cov, false) {
		return "", true
	}
	ev := eig.Values(nil)
	lo, hi := ev[0], ev[len(ev)-1]
	switch {
	case lo < -1e-9*hi:
		return "a covariance that is not positive definite", false
	case lo < 1e-12*hi:
		return "", true
	}
	return "", false
}
