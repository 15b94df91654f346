package eval

import "testing"

// TestLoopsOfDifferentLengthsShareAScalar: two loops over data of
// different lengths read the same scalar register (a parameter in a
// vector-scalar operation). Each loop broadcasts the scalar over its own
// chunk; the second loop took the first one's broadcast, filled over the
// shorter chunk, and the derivative mode's value, gradient and Hessian
// came out wrong or NaN (a Weibull over four observed and two censored
// lifetimes: +Inf and NaN where the value mode gave -40.7), while the
// value mode was right. Checked against finite differences of the value
// mode (gonum's diff/fd).
func TestLoopsOfDifferentLengthsShareAScalar(t *testing.T) {
	head := "t = [410, 620, 835, 1090]\ntc = [1200, 1300]\nparam k in [0, inf]\nparam lam in [0, inf]\n"
	for _, body := range []string{
		"sum((t/lam)^k) + sum((tc/lam)^k)",
		"sum(t^k) - sum(tc^k)/10",
		"sum(log(t/lam)) + sum(log(tc/lam))",
		"sum(exp(k*log(t/lam))) + sum(exp(k*log(tc/lam)))",
		"ld_gamma(k, 2, 1) + ld_lognormal(lam, 7, 1) + sum(log(k) - log(lam) + (k - 1)*log(t/lam) - (t/lam)^k) - sum((tc/lam)^k)",
	} {
		ev := compileSrc(t, head+body)
		fdCheck(t, body, ev, []float64{1.9, 1100}, 1e-5)
	}
	// Three loops of lengths 3, 1 and 5 reading the same two parameters.
	ev := compileSrc(t, "a = [1, 2, 3]\nb = [4]\nc = [0.5, 1, 1.5, 2, 2.5]\nparam p\nparam q in [0, inf]\n"+
		"sum(q*a^p) + sum(q*b^p) - sum((c/q)^2 + p*c)")
	fdCheck(t, "three loops", ev, []float64{0.7, 1.3}, 1e-5)
}
