package engine

import (
	"strings"
	"testing"
)

// TestSuperExponentialTail: six Weibull lifetimes (our data), shape k and
// scale lam on their default log scales. log p holds -(t/lam)^k =
// -exp(e^(z_k) log(t/lam)), which falls faster than any exponential along
// log k where t > lam, so E_q[log p] = -infinity under every Gaussian q
// (E exp(c e^Z) diverges for c > 0 and Z normal): there is no reverse-KL
// optimum, though the cubature converged to one of its own. Both
// reverse-KL fits are absent and say why. A Poisson rate under a gamma
// prior on the log scale falls like -6 e^z, an exponential: its fits stay
// (their closed form is checked in testdata/reference/gamma_log.expect).
func TestSuperExponentialTail(t *testing.T) {
	weibull := "t = [410, 620, 780, 950, 1210, 1530]\nparam k in [0, inf]\nparam lam in [0, inf]\n" +
		"sum(log(k) - log(lam) + (k - 1)*log(t/lam) - (t/lam)^k) + ld_lognormal(k, 0, 1) + ld_lognormal(lam, 7, 1)\n"
	res := analyseSource(t, weibull, Options{})
	said := 0
	for _, d := range res.Diagnostics {
		if d.Code == CodeFitFailed && strings.Contains(d.Message, "faster than any exponential along log k") {
			said++
		}
	}
	if res.Fits[ReverseKL] != nil || res.Fits[MeanField] != nil || said != 2 {
		t.Errorf("Weibull: reverse-KL %v, mean-field %v, %d diagnostics saying why (want none, none, 2): %+v",
			res.Fits[ReverseKL] != nil, res.Fits[MeanField] != nil, said, res.Diagnostics)
	}
	if res.Fits[Laplace] == nil || res.Fits[EP] == nil {
		t.Errorf("Weibull: the Laplace and EP fits are gone")
	}
	poisson := "k = [3, 5, 2, 4, 6, 3]\nparam r in [0, inf]\nld_gamma(r, 2, 1) + sum(ld_poisson(k, r))\n"
	res = analyseSource(t, poisson, Options{})
	if res.Fits[ReverseKL] == nil || res.Fits[MeanField] == nil {
		t.Errorf("Poisson rate: the reverse-KL fits are gone: %+v", res.Diagnostics)
	}
}
