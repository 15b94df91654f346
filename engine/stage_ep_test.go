package engine

import (
	"strings"
	"testing"
)

// The normal mean and sd from five readings with a 1/s prior (the
// reference case normal_sd_n5): EP has one factor of (m, s) per reading.
// With s fitted on its bounded scale the tilted distributions are cut off
// at s = 0 and the quadrature warning names s and the log scale; on the log
// scale EP converges with a quadrature error below the warning's 1e-4.
func TestEPBoundedScaleHint(t *testing.T) {
	src := "y = [4.1, 5.3, 4.8, 5.9, 5.0]\nparam m\nparam s in [0, inf]\n-log(s) + sum(ld_normal(y, m, s))\n"
	warned := func(res *Result) *Diagnostic {
		for i, d := range res.Diagnostics {
			if d.Code == CodeEPQuadrature && d.Severity == SeverityWarning {
				return &res.Diagnostics[i]
			}
		}
		return nil
	}
	res := analyseSource(t, src, Options{Params: []ParamOptions{{}, {Scale: Identity}}})
	d := warned(res)
	if d == nil {
		t.Fatalf("no EP quadrature warning on the bounded scale: %+v", res.Diagnostics)
	}
	if !strings.Contains(d.Message, "With s fitted on its bounded scale") || !strings.Contains(d.Message, "log or logit scale") {
		t.Errorf("the warning does not point to the log scale: %q", d.Message)
	}
	res = analyseSource(t, src, Options{}) // the log scale, s's default
	if d := warned(res); d != nil {
		t.Errorf("EP warned on the log scale: %q", d.Message)
	}
	if res.Fits[EP] == nil {
		t.Errorf("no EP fit on the log scale: %+v", res.Diagnostics)
	}
}

// TestEPRefinedSweepsUndamped: the linear regression with two slopes and
// an unknown noise sd under a 1/s prior (data of ours), with the default
// options: EP's 4-D rules are refined once (6^4 to 9^4 nodes a site), and
// the second sweep after that grows while the sites move to the finer
// rule's fixed point. That growth once halved the damping, and the run
// took 41 sweeps (23 at the finer rule, each five times as costly); with
// the transient left alone (ep.transientSweeps) and the sweeps ending
// below a hundredth of the coarser rule's error (ep.refinedTolShare), 28.
// The bound, 32, leaves room for rounding, not for the damped run.
func TestEPRefinedSweepsUndamped(t *testing.T) {
	src := `x1 = [0.2, 1.1, -0.5, 2.3, 1.7, -1.2, 0.8, -0.3, 1.5, 0.4]
x2 = [1.0, 0.0, 1.0, 1.0, 0.0, 0.0, 1.0, 0.0, 1.0, 0.0]
y = [2.3, 3.1, 1.2, 5.6, 4.2, -0.1, 3.3, 1.0, 4.6, 1.9]
param a
param b1
param b2
param s in [0, inf]
sum(ld_normal(y, a + b1*x1 + b2*x2, s)) + ld_normal(a, 0, 10) + ld_normal(b1, 0, 10) + ld_normal(b2, 0, 10) - log(s)
`
	res := analyseSource(t, src, Options{})
	f := res.Fits[EP]
	if f == nil {
		t.Fatalf("no EP fit: %+v", res.Diagnostics)
	}
	t.Logf("EP: %d sweeps, converged %v, last change %.2g", f.Iterations, f.Converged, f.Residual)
	if !f.Converged || f.Iterations > 32 {
		t.Errorf("EP converged %v after %d sweeps: want converged within 32", f.Converged, f.Iterations)
	}
}

// TestRunawayReverseKL: a Weibull model of lifetimes with censoring (our
// data), shape k and scale lam on their default log scales. log p holds
// -(t/lam)^k = -exp(e^(z_k) (log t - z_lam)): for every Gaussian q over
// (z_k, z_lam), E_q of it is -infinity (E exp(c e^Z) diverges for c > 0 and
// Z normal), so KL(q||p) is infinite and there is no reverse-KL optimum.
// Both reverse-KL fits are absent with a fit_failed diagnostic that says
// so (the iterations ended at residuals of 7e106; the mean-field one had
// failed on a trial step at 1e104 with "log p is NaN"); the Laplace,
// forward-KL and EP fits stand.
func TestRunawayReverseKL(t *testing.T) {
	src := "t = [410, 620, 835, 1090]\ntc = [1200, 1200]\nparam k in [0, inf]\nparam lam in [0, inf]\n" +
		"ld_gamma(k, 2, 1) + ld_lognormal(lam, 7, 1) + sum(log(k) - log(lam) + (k - 1)*log(t/lam) - (t/lam)^k) - sum((tc/lam)^k)\n"
	res := analyseSource(t, src, Options{})
	for _, m := range []Method{ReverseKL, MeanField} {
		if res.Fits[m] != nil {
			t.Errorf("%s: a fit is shown where none exists", m)
		}
	}
	said := 0
	for _, d := range res.Diagnostics {
		if d.Code == CodeFitFailed && strings.Contains(d.Message, "falls faster than any Gaussian") {
			said++
		}
	}
	if said != 2 {
		t.Errorf("%d fit_failed diagnostics say why, want 2: %+v", said, res.Diagnostics)
	}
	for _, m := range []Method{Laplace, ForwardKL, EP} {
		if res.Fits[m] == nil {
			t.Errorf("no %s fit", m)
		}
	}
}
