package quadrature

import (
	"fmt"
	"math"
	"strings"
	"testing"
)

// Invented readings.
var readings = []float64{4.1, 5.3, 4.8, 5.9, 5.0}

func dataLine(name string, v []float64) string {
	s := make([]string, len(v))
	for i, x := range v {
		s[i] = fmt.Sprint(x)
	}
	return name + " = [" + strings.Join(s, ", ") + "]\n"
}

// TestNormalUnknownSD integrates the normal model with unknown mean and sd
// under the prior 1/s, on (m, log s), against the closed forms of Gelman et
// al., Bayesian Data Analysis, 3rd ed., section 3.2: m | y ~ t_{n-1}(ybar,
// s^2/n), sigma^2 | y ~ Inv-chi^2(n-1, s^2).
func TestNormalUnknownSD(t *testing.T) {
	for _, n := range []int{3, 4, 5} {
		t.Run(fmt.Sprintf("n%d", n), func(t *testing.T) {
			y := readings[:n]
			pr := compile(t, dataLine("y", y)+"param m\nparam s in [0, inf]\n-log(s) + sum(ld_normal(y, m, s))\n")
			res := pr.integrate(t, Settings{})
			nf := float64(n)
			ybar, ss := 0.0, 0.0
			for _, v := range y {
				ybar += v / nf
			}
			for _, v := range y {
				ss += (v - ybar) * (v - ybar)
			}
			nu := nf - 1
			s2 := ss / nu
			// Z = (2 pi)^(-(n-1)/2) n^(-1/2) Gamma((n-1)/2) (S/2)^(-(n-1)/2) / 2:
			// integrate m (a normal integral), then sigma (a gamma integral).
			lg, _ := math.Lgamma(nu / 2)
			logZ := -nu/2*math.Log(2*math.Pi) - math.Log(nf)/2 + lg - nu/2*math.Log(ss/2) - math.Log(2)
			check(t, "log Z", res.LogZ, logZ, 1e-6, res.LogZErr)
			u, o := res.Unconstrained, res.Original
			sdM := math.Sqrt(s2 / nf) // the t scale
			check(t, "mean m", u.Mean[0], ybar, 1e-4*sdM, u.MeanErr[0])
			// E log sigma = (log(nu s^2) - digamma(nu/2) - log 2)/2; Var log sigma
			// = trigamma(nu/2)/4 (log of a chi-square variable).
			dg := map[int]float64{3: -0.5772156649015329, 4: 0.03648997397857652, 5: 0.42278433509846713}[n]       // digamma(1), (3/2), (2): A&S 6.3.2, 6.3.3
			tg := map[int]float64{3: math.Pi * math.Pi / 6, 4: math.Pi*math.Pi/2 - 4, 5: math.Pi*math.Pi/6 - 1}[n] // trigamma: A&S 6.4.4, 6.4.5
			sdZ := math.Sqrt(tg / 4)
			check(t, "mean log s", u.Mean[1], (math.Log(nu*s2)-dg-math.Log(2))/2, 1e-4*sdZ, u.MeanErr[1])
			check(t, "var log s", u.Cov[3], tg/4, 1e-4*tg/4, u.CovErr[3])
			if n > 3 {
				check(t, "cov(m, log s)", u.Cov[1], 0, 1e-4*sdM*sdZ, u.CovErr[1]) // zero by symmetry about ybar
			}
			// E sigma = sqrt(nu s^2/2) Gamma((nu-1)/2) / Gamma(nu/2) (the mean of an inverse chi).
			lg1, _ := math.Lgamma((nu - 1) / 2)
			eSigma := math.Sqrt(nu*s2/2) * math.Exp(lg1-lg)
			check(t, "mean s", o.Mean[1], eSigma, 1e-4*eSigma, o.MeanErr[1])
			if n == 3 {
				// t_2 and the inverse chi with 2 dof: infinite variances.
				if !u.VarInfinite[0] || !o.VarInfinite[0] || !o.VarInfinite[1] {
					t.Errorf("n = 3: the variances of m and s are infinite, got flags %v %v", u.VarInfinite, o.VarInfinite)
				}
				if u.VarInfinite[1] || u.MeanInfinite[0] || o.MeanInfinite[1] {
					t.Errorf("n = 3: the means and var log s are finite, got %v %v %v", u.MeanInfinite, o.MeanInfinite, u.VarInfinite)
				}
			} else {
				// Var m = s^2/n nu/(nu-2) (Student t); E sigma^2 = nu s^2/(nu-2).
				vm := s2 / nf * nu / (nu - 2)
				check(t, "var m", u.Cov[0], vm, 1e-4*vm, u.CovErr[0])
				es2 := nu * s2 / (nu - 2)
				check(t, "var s", o.Cov[3], es2-eSigma*eSigma, 1e-4*(es2-eSigma*eSigma), o.CovErr[3])
				if !u.KurtosisInfinite[0] {
					t.Errorf("n = %d: the kurtosis of t_%d is infinite, got %g", n, n-1, u.ExcessKurtosis[0])
				}
				if n == 4 && !u.SkewnessInfinite[0] {
					t.Errorf("n = 4: the third moment of t_3 is infinite, got %g", u.Skewness[0])
				}
				if n == 5 {
					check(t, "skewness m", u.Skewness[0], 0, 1e-3, u.SkewnessErr[0]) // t_4 is symmetric
				}
			}
			if res.Improper {
				t.Error("called improper")
			}
			t.Logf("order %v points %d derivs %d; log Z err %.2g est %.2g", res.Order, res.Points, res.Derivs, res.LogZ-logZ, res.LogZErr)
		})
	}
}
