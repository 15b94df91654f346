package engine

import (
	"fmt"
	"math"
	"testing"
)

// The eight-schools posterior of the population mean mu and sd tau with a
// flat prior (Gelman et al., Bayesian Data Analysis, 3rd ed., section 5.4;
// data of Rubin 1981: the estimated coaching effects y_j and their standard
// errors sigma_j). Given tau, mu integrates out in closed form (BDA eqs.
// 5.20-5.21): with V_j = sigma_j^2 + tau^2, P = sum 1/V_j and
// mu_hat = sum(y_j/V_j)/P,
//
//	int prod_j N(y_j | mu, V_j) dmu = prod_j (2 pi V_j)^(-1/2)
//	    exp(-sum_j (y_j - mu_hat)^2 / (2 V_j)) sqrt(2 pi / P),
//
// and mu | tau, y ~ N(mu_hat, 1/P). The reference below integrates the
// remaining one-dimensional tau integral independently of the engine: the
// trapezoid rule in s = log tau with a fine step (the integrand decays like
// tau for tau -> 0 and like tau^-6 for tau -> inf in s, both exponentially).
const eightSchoolsModel = `# eight schools: coaching effects and their standard errors
y = [28, 8, -3, 7, -1, 1, 18, 12]
sigma = [15, 10, 16, 11, 9, 11, 10, 18]
param mu
param tau in [0, inf]
sum(ld_normal(y, mu, sqrt(sigma^2 + tau^2)))
`

// The accuracy the reference reaches at its default settings on this smooth
// posterior: log Z within 1e-6, means within 1e-4 sd, covariances within
// 1e-4 of sd_i sd_j.
const (
	eightLogZTol = 1e-6
	eightMeanTol = 1e-4
	eightCovTol  = 1e-4
)

var (
	eightY     = []float64{28, 8, -3, 7, -1, 1, 18, 12}
	eightSigma = []float64{15, 10, 16, 11, 9, 11, 10, 18}
)

// eightSchoolsReference returns log Z, the means of (mu, tau) and their
// covariance by the one-dimensional integral over tau, with step h in log tau.
func eightSchoolsReference(h float64) (logZ float64, mean [2]float64, cov [2][2]float64) {
	var z, m1, t1, mm, tt, mt float64
	for s := -40.0; s <= 20; s += h {
		tau := math.Exp(s)
		var p, py, logc float64
		for j, y := range eightY {
			v := eightSigma[j]*eightSigma[j] + tau*tau
			p += 1 / v
			py += y / v
			logc -= 0.5 * math.Log(2*math.Pi*v)
		}
		muHat := py / p
		for j, y := range eightY {
			v := eightSigma[j]*eightSigma[j] + tau*tau
			logc -= (y - muHat) * (y - muHat) / (2 * v)
		}
		logc += 0.5 * math.Log(2*math.Pi/p)
		w := math.Exp(logc) * tau * h // dtau = tau ds
		z += w
		m1 += w * muHat
		t1 += w * tau
		mm += w * (muHat*muHat + 1/p)
		tt += w * tau * tau
		mt += w * tau * muHat
	}
	mean = [2]float64{m1 / z, t1 / z}
	cov[0][0] = mm/z - mean[0]*mean[0]
	cov[1][1] = tt/z - mean[1]*mean[1]
	cov[0][1] = mt/z - mean[0]*mean[1]
	cov[1][0] = cov[0][1]
	return math.Log(z), mean, cov
}

func TestEightSchools(t *testing.T) {
	logZ, mean, cov := eightSchoolsReference(1e-3)
	// The reference checks itself: halving the step changes nothing at the
	// tolerances below (the trapezoid rule converges exponentially here).
	logZ2, mean2, _ := eightSchoolsReference(2e-3)
	if math.Abs(logZ-logZ2) > 1e-10 || math.Abs(mean[1]-mean2[1]) > 1e-8 {
		t.Fatalf("independent reference not converged: %g %g", logZ-logZ2, mean[1]-mean2[1])
	}
	t.Logf("reference: log Z %.10g, mean %v, cov %v", logZ, mean, cov)
	res := analyseSource(t, eightSchoolsModel, Options{})
	t.Logf("engine: log Z %.10g, mean %v, cov %v, %s", res.Exact.LogZ, res.Exact.Mean, res.Exact.Cov, codeList(res))
	doc, _ := resultDoc(t, res)
	num := func(path string) float64 {
		v, ok := lookup(doc, path)
		f, isNum := v.(float64)
		if !ok || !isNum {
			t.Fatalf("%s is %v, want a number (diagnostics %s)", path, v, codeList(res))
		}
		return f
	}
	if e := math.Abs(num("exact.log_z") - logZ); e > eightLogZTol {
		t.Errorf("log Z = %.10g, want %.10g (off by %.3g)", num("exact.log_z"), logZ, e)
	}
	for i := range 2 {
		sd := math.Sqrt(cov[i][i])
		if e := math.Abs(num(fmt.Sprintf("exact.mean.%d", i))-mean[i]) / sd; e > eightMeanTol {
			t.Errorf("mean %d = %.10g, want %.10g (off by %.3g sd)", i, num(fmt.Sprintf("exact.mean.%d", i)), mean[i], e)
		}
		for j := range 2 {
			sdj := math.Sqrt(cov[j][j])
			got := num(fmt.Sprintf("exact.cov.%d.%d", i, j))
			if e := math.Abs(got-cov[i][j]) / (sd * sdj); e > eightCovTol {
				t.Errorf("cov %d,%d = %.10g, want %.10g (off by %.3g of sd_i sd_j)", i, j, got, cov[i][j], e)
			}
		}
	}
}
