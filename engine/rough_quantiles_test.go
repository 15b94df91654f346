package engine

import (
	"math"
	"strings"
	"testing"
)

// Hierarchical models whose effects' (or mean's) marginals no walk of
// their own resolves: the quantiles come from the rule's walks to the
// looser bound walkQuantileRoughTol, with a grid_error diagnostic. The
// references integrate the normal parts in closed form (given the scale
// tau the effects, or the mean, are normal) and the rest over s = log tau
// by the trapezoid rule, independently of the engine; the quantiles come
// from the mixture of normals over tau, by bisection.

// mixNode is a node of the trapezoid rule in log tau: its weight (the
// marginal density of tau times tau h) and a parameter's conditional mean
// and variance given tau.
type mixNode struct{ w, mean, variance float64 }

// mixtureCDF returns the mixture's distribution function at x.
func mixtureCDF(nodes []mixNode, x float64) float64 {
	c, z := 0.0, 0.0
	for _, nd := range nodes {
		z += nd.w
		if nd.variance == 0 {
			if x >= nd.mean {
				c += nd.w
			}
			continue
		}
		c += nd.w * 0.5 * math.Erfc(-(x-nd.mean)/math.Sqrt(2*nd.variance))
	}
	return c / z
}

// mixtureQuantile returns the mixture's quantile at p by bisection.
func mixtureQuantile(nodes []mixNode, p float64) float64 {
	a, b := -50.0, 50.0
	for range 200 {
		m := (a + b) / 2
		if mixtureCDF(nodes, m) < p {
			a = m
		} else {
			b = m
		}
	}
	return (a + b) / 2
}

// logTauNodes returns the trapezoid rule's nodes in s = log tau with step h
// over [lo, hi]: at returns the density of tau (the normal parts
// integrated out, unnormalised) and the conditional mean and variance of
// each of the parameters the test follows.
func logTauNodes(h, lo, hi float64, at func(tau float64) (float64, []float64, []float64)) [][]mixNode {
	var out [][]mixNode
	for s := lo; s <= hi; s += h {
		tau := math.Exp(s)
		dens, means, vars := at(tau)
		if out == nil {
			out = make([][]mixNode, len(means))
		}
		for k := range means {
			out[k] = append(out[k], mixNode{dens * tau * h, means[k], vars[k]})
		}
	}
	return out
}

// checkRoughQuantiles analyses src and checks the quantiles of the
// parameters named (index -> reference nodes) against the mixtures': the
// distribution function there is within walkQuantileRoughTol of the
// quantile's probability, and a grid_error diagnostic names them.
func checkRoughQuantiles(t *testing.T, src string, names []string, params map[int][]mixNode, finer map[int][]mixNode) {
	t.Helper()
	res := analyseSource(t, src, Options{})
	probs := []float64{0.025, 0.5, 0.975}
	worst := 0.0
	for k, nodes := range params {
		for i, p := range probs {
			want := mixtureQuantile(nodes, p)
			if w2 := mixtureQuantile(finer[k], p); math.Abs(w2-want) > 1e-8 {
				t.Fatalf("independent quantile of %s not converged: %g against %g", names[k], want, w2)
			}
			got := res.Exact.Quantiles[k][i]
			e := math.Abs(mixtureCDF(nodes, got) - p)
			worst = max(worst, e)
			t.Logf("%s %.3f: engine %.8f, reference %.8f, off by %.2g of probability", names[k], p, got, want, e)
			if !(e <= walkQuantileRoughTol) {
				t.Errorf("quantile %.3f of %s = %.10g, want %.10g: off by %.3g of probability", p, names[k], got, want, e)
			}
		}
	}
	found := false
	for _, d := range res.Diagnostics {
		if d.Code == CodeGridError && strings.Contains(d.Message, "quantiles of") {
			found = true
			for k := range params {
				if !strings.Contains(d.Message, names[k]) {
					t.Errorf("the diagnostic does not name %s: %s", names[k], d.Message)
				}
			}
		}
		if d.Code == CodeUnresolved {
			t.Errorf("unexpected diagnostic %s: %s", d.Code, d.Message)
		}
	}
	if !found {
		t.Errorf("no grid_error diagnostic on the quantiles (%s)", codeList(res))
	}
	t.Logf("largest error %.2g of probability", worst)
}

// Three group effects a_j ~ N(0, tau), two unit-noise readings each, tau
// half-Cauchy(0, 1): given tau, a_j | y ~ N(v s_j, v) with v = 1/(1/tau^2
// + 2) and s_j the group's sum, and s_j | tau ~ N(0, 4 tau^2 + 2). The
// effects' marginals have a logarithmic peak at 0 (the prior of tau is
// positive there).
const threeEffectsModel = `# three group effects around 0 with a shared scale
y1 = [0.4, 0.9]
y2 = [-0.3, 0.1]
y3 = [1.1, 1.6]
param tau in [0, inf]
param a1
param a2
param a3
ld_cauchy(tau, 0, 1) + ld_normal(a1, 0, tau) + ld_normal(a2, 0, tau) + ld_normal(a3, 0, tau) + sum(ld_normal(y1, a1, 1)) + sum(ld_normal(y2, a2, 1)) + sum(ld_normal(y3, a3, 1))
`

func threeEffectsAt(tau float64) (float64, []float64, []float64) {
	sums := []float64{0.4 + 0.9, -0.3 + 0.1, 1.1 + 1.6}
	dens := 1 / (1 + tau*tau)
	v := 1 / (1/(tau*tau) + 2)
	means, vars := make([]float64, 4), make([]float64, 4)
	for j, s := range sums {
		dens *= normalDensity(s, 0, math.Sqrt(4*tau*tau+2))
		means[j+1], vars[j+1] = v*s, v
	}
	return dens, means, vars
}

func TestRoughWalkQuantilesAgainstConjugateEffects(t *testing.T) {
	nodes := logTauNodes(1e-3, -40, 12, threeEffectsAt)
	finer := logTauNodes(2e-3, -40, 12, threeEffectsAt)
	names := []string{"tau", "a1", "a2", "a3"}
	checkRoughQuantiles(t, threeEffectsModel, names,
		map[int][]mixNode{1: nodes[1], 2: nodes[2], 3: nodes[3]},
		map[int][]mixNode{1: finer[1], 2: finer[2], 3: finer[3]})
}

// Two groups written non-centred: readings y_ij ~ N(mu + tau e_j, 0.5),
// e_j ~ N(0, 1), mu ~ N(0, 10), tau half-Cauchy(0, 1). Given tau, the
// group means ybar_j ~ N(mu, tau^2 + 0.25/3) and mu | tau, y is normal;
// p(y | tau) is the normal density of the two means with mu integrated
// out. mu's marginal is a sharp peak (small tau pulls it between the
// groups) on wide tails (large tau frees it).
const nonCentredModel = `# non-centred two groups
y1 = [1.2, 0.8, 1.5]
y2 = [2.1, 2.6, 1.9]
param mu
param tau in [0, inf]
param e1
param e2
ld_normal(mu, 0, 10) + ld_cauchy(tau, 0, 1) + ld_normal(e1, 0, 1) + ld_normal(e2, 0, 1) + sum(ld_normal(y1, mu + tau*e1, 0.5)) + sum(ld_normal(y2, mu + tau*e2, 0.5))
`

func nonCentredAt(tau float64) (float64, []float64, []float64) {
	means := []float64{(1.2 + 0.8 + 1.5) / 3, (2.1 + 2.6 + 1.9) / 3}
	v := tau*tau + 0.25/3
	// ybar ~ N(0, 100 11' + v I): its inverse and determinant in 2-D.
	s00, s11, s01 := 100+v, 100+v, 100.0
	det := s00*s11 - s01*s01
	i00, i11, i01 := s11/det, s00/det, -s01/det
	q := means[0]*means[0]*i00 + 2*means[0]*means[1]*i01 + means[1]*means[1]*i11
	dens := math.Exp(-q/2) / math.Sqrt(det) / (1 + tau*tau)
	muVar := 1 / (1.0/100 + 2/v)
	muMean := muVar * (means[0] + means[1]) / v
	return dens, []float64{muMean}, []float64{muVar}
}

func TestRoughWalkQuantilesNonCentredMean(t *testing.T) {
	nodes := logTauNodes(1e-3, -40, 20, nonCentredAt)
	finer := logTauNodes(2e-3, -40, 20, nonCentredAt)
	checkRoughQuantiles(t, nonCentredModel, []string{"mu", "tau", "e1", "e2"},
		map[int][]mixNode{0: nodes[0]}, map[int][]mixNode{0: finer[0]})
}
