package engine

import (
	"math"
	"testing"
)

// Three group effects t_j with a shared between-group sd tau, each seen
// once with unit noise (y_j | t_j ~ N(t_j, 1), t_j | tau ~ N(0, tau),
// tau ~ N(0, 2) cut to [0, inf], the normal's density as written, so the
// prior holds 1/2): the first hierarchical model many users write. Its
// density on the unconstrained scale (log tau) has no mode: with the
// effects at 0 it grows like tau^-2 as tau -> 0 (the funnel's neck), while
// the posterior is proper (the marginal of log tau falls like tau). The
// engine once gave the grid's results here, log Z off by 0.045 and the
// mean of tau by 0.055 (a quarter of its sd), with a warning.
//
// The reference integrates the effects in closed form (the conjugate
// update: y_j | tau ~ N(0, 1 + tau^2), t_j | tau, y ~ N(y_j f, f) with f =
// tau^2 / (1 + tau^2)) and the remaining integral over s = log tau by the
// trapezoid rule, independently of the engine.
const groupScaleModel = `# three group effects with a shared between-group sd
y = [1.2, -0.4, 2.1]
param tau in [0, inf]
param t1
param t2
param t3
ld_normal(tau, 0, 2) + ld_normal(t1, 0, tau) + ld_normal(t2, 0, tau) + ld_normal(t3, 0, tau) + ld_normal(y[1], t1, 1) + ld_normal(y[2], t2, 1) + ld_normal(y[3], t3, 1)
`

var groupScaleY = []float64{1.2, -0.4, 2.1}

// groupScaleReference returns log Z, the means of (tau, t1, t2, t3) and
// their variances by the trapezoid rule in log tau with step h.
func groupScaleReference(h float64) (logZ float64, mean, variance [4]float64) {
	normal := func(x, sd float64) float64 {
		return math.Exp(-0.5*(x/sd)*(x/sd)) / (sd * math.Sqrt(2*math.Pi))
	}
	var z float64
	var m1, m2 [4]float64
	for s := -40.0; s <= 5; s += h {
		tau := math.Exp(s)
		w := normal(tau, 2) * tau * h // dtau = tau ds
		f := tau * tau / (1 + tau*tau)
		for _, y := range groupScaleY {
			w *= normal(y, math.Sqrt(1+tau*tau))
		}
		z += w
		m1[0] += w * tau
		m2[0] += w * tau * tau
		for j, y := range groupScaleY {
			m1[j+1] += w * y * f
			m2[j+1] += w * (f + y*f*y*f)
		}
	}
	for k := range mean {
		mean[k] = m1[k] / z
		variance[k] = m2[k]/z - mean[k]*mean[k]
	}
	return math.Log(z), mean, variance
}

func TestGroupScaleOnItsBound(t *testing.T) {
	logZ, mean, variance := groupScaleReference(1e-3)
	logZ2, mean2, _ := groupScaleReference(2e-3)
	if math.Abs(logZ-logZ2) > 1e-10 || math.Abs(mean[0]-mean2[0]) > 1e-9 {
		t.Fatalf("independent reference not converged: %g %g", logZ-logZ2, mean[0]-mean2[0])
	}
	t.Logf("reference: log Z %.10g, mean %v, var %v", logZ, mean, variance)
	res := analyseSource(t, groupScaleModel, Options{})
	ex := res.Exact
	t.Logf("engine: log Z %.10g +- %.2g, mean %v, %s", ex.LogZ, ex.LogZErr, ex.Mean, codeList(res))
	if e := math.Abs(ex.LogZ - logZ); e > 1e-6 || e > ex.LogZErr {
		t.Errorf("log Z = %.10g +- %.2g, want %.10g (off by %.3g)", ex.LogZ, ex.LogZErr, logZ, e)
	}
	for k := range 4 {
		sd := math.Sqrt(variance[k])
		if e := math.Abs(ex.Mean[k] - mean[k]); e > 1e-4*sd || e > 2*ex.MeanErr[k]+1e-12 {
			t.Errorf("mean %d = %.10g +- %.2g, want %.10g (off by %.3g sd)", k, ex.Mean[k], ex.MeanErr[k], mean[k], e/sd)
		}
		if e := math.Abs(ex.Cov[k][k]-variance[k]) / variance[k]; e > 1e-4 {
			t.Errorf("variance %d = %.10g, want %.10g (off by %.3g relative)", k, ex.Cov[k][k], variance[k], e)
		}
	}
	for _, d := range res.Diagnostics {
		if d.Code == CodeGridError || d.Code == CodeUnresolved {
			t.Errorf("unexpected diagnostic %s: %s", d.Code, d.Message)
		}
	}
}
