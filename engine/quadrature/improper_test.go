package quadrature

import (
	"context"
	"math"
	"testing"
)

// TestImproper: the verdict "improper" only where the integral diverges.
func TestImproper(t *testing.T) {
	// (1 + x^2)^(-1/2) decays like 1/|x|: its integral diverges (log).
	pr := compile(t, "param x\n-0.5*log(1 + x^2)\n")
	if res := pr.integrate(t, Settings{}); !res.Improper {
		t.Errorf("(1+x^2)^(-1/2): want improper, got log Z %g", res.LogZ)
	}
	// The Cauchy density 1/(1+x^2) is proper, Z = pi, with no mean.
	pr = compile(t, "param x\n-log(1 + x^2)\n")
	res := pr.integrate(t, Settings{})
	if res.Improper {
		t.Error("Cauchy: called improper")
	}
	check(t, "Cauchy log Z", res.LogZ, math.Log(math.Pi), 1e-6, res.LogZErr) // integral of 1/(1+x^2) is pi
	if !res.Unconstrained.MeanInfinite[0] {
		t.Errorf("Cauchy: the mean does not exist, got %g", res.Unconstrained.Mean[0])
	}
	// One reading with the prior 1/s: p(m, s) ~ s^-2 exp(-(y-m)^2/(2 s^2));
	// integrating m leaves 1/s, whose integral diverges at both ends (with
	// n >= 2 readings the same prior gives a proper posterior: see
	// TestNormalUnknownSD). There is no mode: the start is a guess.
	pr = compile(t, "param m\nparam s in [0, inf]\n-log(s) + ld_normal(4.2, m, s)\n")
	st := Start{Mode: []float64{4.2, 0}, Cov: []float64{1, 0, 0, 1}}
	r, err := Integrate(context.Background(), pr.p, st, Settings{Maps: pr.maps})
	if err != nil {
		t.Fatal(err)
	}
	if !r.Improper {
		t.Errorf("one reading with the prior 1/s: want improper, got log Z %g", r.LogZ)
	}
	// A log-scale parameter with a flat prior on s and no data:
	// p(s) = exp(-1/s) tends to 1: improper at infinity.
	pr = compile(t, "param s in [0, inf]\n-1/s\n")
	st = Start{Mode: []float64{0}, Cov: []float64{1}}
	if r, err = Integrate(context.Background(), pr.p, st, Settings{Maps: pr.maps}); err != nil || !r.Improper {
		t.Errorf("exp(-1/s) on [0, inf]: want improper, got %v, err %v", r, err)
	}
}

// TestEstimateNotPessimistic: on smooth cases the error estimate is within
// a factor 100 of the actual error where that is above rounding (1e-12).
func TestEstimateNotPessimistic(t *testing.T) {
	for _, tc := range []struct {
		src  string
		logZ float64
	}{
		{equicorrelated(2, 0.99), math.Log(2*math.Pi) + 0.5*math.Log(1-0.99*0.99)}, // d/2 log 2 pi + log det / 2
		{equicorrelated(3, 0.95), 1.5*math.Log(2*math.Pi) + 0.5*(2*math.Log(0.05)+math.Log(2.9))},
		{"param x in [0, 1]\n2*log(x) + 4*log(1-x)\n", math.Log(2.0 * 24 / 5040)}, // B(3, 5)
		{"param x in [0, inf]\n2*log(x) - 2*x\n", math.Log(2.0 / 8)},              // Gamma(3)/2^3
	} {
		res := compile(t, tc.src).integrate(t, Settings{})
		err := math.Abs(res.LogZ - tc.logZ)
		t.Logf("log Z error %.2g, estimate %.2g", err, res.LogZErr)
		if err > 1e-12 && res.LogZErr > 100*err {
			t.Errorf("%q: estimate %.2g over 100 times the error %.2g", tc.src, res.LogZErr, err)
		}
		if err > res.LogZErr {
			t.Errorf("%q: estimate %.2g below the error %.2g", tc.src, res.LogZErr, err)
		}
	}
}
