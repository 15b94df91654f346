package ep

import (
	"errors"
	"math"
	"testing"

	"gonum.org/v1/gonum/integrate/quad"
	"gonum.org/v1/gonum/mat"
)

// Invented data of a straight-line fit y = a + b x with noise sd 0.5.
var (
	lineX = []float64{-1, -0.2, 0.4, 1.1, 2.0, 2.7}
	lineY = []float64{-0.8, 0.1, 0.9, 1.2, 2.6, 2.9}
)

// lineFactors is the straight-line fit with a N(0, 2^2) prior on a and b
// (quadratic, kept exact) and one Gaussian likelihood factor per point,
// given as factors of one linear combination (1, x_i).
func lineFactors() *funcFactors {
	fs := &funcFactors{d: 2, fs: []funcFactor{gaussPrior(2, 2)}}
	for i := range lineX {
		x, y := lineX[i], lineY[i]
		fs.fs = append(fs.fs, funcFactor{
			dir: []float64{1, x},
			log: func(p []float64) float64 { r := y - p[0] - p[1]*x; return -r * r / (2 * 0.25) },
		})
	}
	return fs
}

// lineExact is the closed-form posterior of the straight-line fit (the
// conjugate normal linear model: precision A = I/4 + X^T X / s^2, mean
// A^-1 X^T y / s^2) and its log-normaliser, log of the integral of
// exp(-|t|^2/8 - |y - X t|^2/(2 s^2)): -y^T y/(2 s^2) + b^T A^-1 b/2 +
// log(2 pi) - log det A / 2 with b = X^T y / s^2.
func lineExact() (mean, cov []float64, logZ float64) {
	n := len(lineX)
	X := mat.NewDense(n, 2, nil)
	for i := range lineX {
		X.Set(i, 0, 1)
		X.Set(i, 1, lineX[i])
	}
	y := mat.NewVecDense(n, append([]float64(nil), lineY...))
	var A mat.Dense
	A.Mul(X.T(), X)
	A.Scale(1/0.25, &A)
	A.Set(0, 0, A.At(0, 0)+0.25)
	A.Set(1, 1, A.At(1, 1)+0.25)
	var b mat.VecDense
	b.MulVec(X.T(), y)
	b.ScaleVec(1/0.25, &b)
	var C mat.Dense
	if err := C.Inverse(&A); err != nil {
		panic(err)
	}
	var m mat.VecDense
	m.MulVec(&C, &b)
	logZ = -mat.Dot(y, y)/(2*0.25) + mat.Dot(&b, &m)/2 + math.Log(2*math.Pi) - math.Log(mat.Det(&A))/2
	return []float64{m.AtVec(0), m.AtVec(1)}, []float64{C.At(0, 0), C.At(0, 1), C.At(1, 0), C.At(1, 1)}, logZ
}

// TestGaussianExactAfterOneSweep: with a Gaussian likelihood and prior, each
// tilted distribution is Gaussian and an undamped sequential sweep sets
// every site to its factor: EP is exact after one sweep (Minka 2001,
// section 3.2; the closed form is the conjugate normal linear model).
func TestGaussianExactAfterOneSweep(t *testing.T) {
	mean, cov, logZ := lineExact()
	res := run(t, lineFactors(), &Settings{MaxSweeps: 1})
	if res.Sweeps != 1 {
		t.Fatalf("%d sweeps", res.Sweeps)
	}
	for k := range mean {
		if math.Abs(res.Mean[k]-mean[k]) > 1e-10*math.Sqrt(cov[k*2+k]) {
			t.Errorf("mean %v, closed form %v", res.Mean, mean)
		}
	}
	for k := range cov {
		if math.Abs(res.Cov[k]-cov[k]) > 1e-10*math.Sqrt(cov[0]*cov[3]) {
			t.Errorf("cov %v, closed form %v", res.Cov, cov)
		}
	}
	if math.Abs(res.LogZ-logZ) > 1e-9 {
		t.Errorf("log Z %v, closed form %v", res.LogZ, logZ)
	}
	// A second sweep changes nothing (to rounding): converged.
	res = run(t, lineFactors(), nil)
	if !res.Converged || res.Sweeps > 2 {
		t.Errorf("second run: converged %v after %d sweeps", res.Converged, res.Sweeps)
	}
}

// TestGaussianModelExact: through the model language, the Gaussian
// likelihood is a quadratic factor kept exact: no sites, exact moments and
// log Z (same closed form).
func TestGaussianModelExact(t *testing.T) {
	src := "x = [-1, -0.2, 0.4, 1.1, 2.0, 2.7]; y = [-0.8, 0.1, 0.9, 1.2, 2.6, 2.9]\n" +
		"-(a^2 + b^2)/8 + sum(-(y - a - b*x)^2)/(2*0.25)"
	fs, _ := splitModel(t, src)
	res := run(t, fs, nil)
	mean, cov, logZ := lineExact()
	if res.Status != NoSites || len(res.Sites) != 0 {
		t.Errorf("status %v with %d sites, want every factor exact", res.Status, len(res.Sites))
	}
	for k := range mean {
		if math.Abs(res.Mean[k]-mean[k]) > 1e-9 || math.Abs(res.Cov[k*2+k]-cov[k*2+k]) > 1e-9 {
			t.Errorf("moments %v %v, closed form %v %v", res.Mean, res.Cov, mean, cov)
		}
	}
	if math.Abs(res.LogZ-logZ) > 1e-8 {
		t.Errorf("log Z %v, closed form %v", res.LogZ, logZ)
	}
}

// TestOneFactorIsMomentMatching: with one factor beside the Gaussian part,
// EP's fixed point is the Gaussian with the exact mean and covariance
// (Minka 2001: EP with a single factor is assumed-density filtering, i.e.
// moment matching), checked against gonum's Gauss-Legendre quadrature.
func TestOneFactorIsMomentMatching(t *testing.T) {
	cases := []struct {
		name   string
		src    string
		lo, hi []float64
	}{
		// 1-D: one datum of the clutter problem (Minka 2001, section 3.3),
		// with a N(0, 3^2) prior.
		{"clutter datum", "-th^2/18 + log(0.5*exp(-(2.5 - th)^2/2)/sqrt(2*pi) + 0.5*exp(-2.5^2/20)/sqrt(20*pi))",
			[]float64{-40}, []float64{40}},
		// 2-D, not a function of one linear combination.
		{"product", "-(a^2 + b^2)/2 - (a*b - 1)^2/2", []float64{-9, -9}, []float64{9, 9}},
	}
	for _, c := range cases {
		fs, ev := splitModel(t, c.src)
		res := run(t, fs, &Settings{Tol: 1e-12})
		if len(res.Sites) != 1 || !res.Converged {
			t.Errorf("%s: %d sites, %d sweeps, converged %v", c.name, len(res.Sites), res.Sweeps, res.Converged)
		}
		logZ, mean, cov := exactMoments(ev.LogDensity, c.lo, c.hi, 400)
		me, se, ce := distances(res.Mean, res.Cov, mean, cov)
		t.Logf("%s: quadrature error %.2g with %d/%d nodes, %d refinements", c.name, res.QuadratureError, res.Nodes1D, res.NodesPerAxis, res.Refinements)
		t.Logf("%s: mean error %.2g sd, sd error %.2g, corr error %.2g, log Z %v vs %v", c.name, me, se, ce, res.LogZ, logZ)
		if me > 1e-8 || se > 1e-8 || ce > 1e-8 || math.Abs(res.LogZ-logZ) > 1e-8 {
			t.Errorf("%s: EP is not the moment-matching Gaussian", c.name)
		}
	}
}

// TestSingleFactorAbsent: one factor and no Gaussian part: no cavity.
func TestSingleFactorAbsent(t *testing.T) {
	fs, _ := splitModel(t, "-log(1 + x^2)")
	if _, err := Run(t.Context(), fs, nil); !errors.Is(err, ErrSingleFactor) {
		t.Errorf("err %v, want ErrSingleFactor", err)
	}
}

// tiltedCheck computes each rank-one site's tilted moments independently
// (gonum's Gauss-Legendre rule on the cavity's +-20 sd, the factor
// evaluated at the minimum-norm point of the line a^T x = s) and returns
// the largest disagreement with the approximation's moments of s.
func tiltedCheck(t *testing.T, fs Factors, res *Result) float64 {
	d := fs.Dim()
	worst := 0.0
	for _, st := range res.Sites {
		a := st.Direction
		if a == nil {
			t.Fatalf("factor %d has no direction", st.Factor)
		}
		ca := make([]float64, d)
		mulVec(ca, res.Cov, a, d)
		v, m := dot(a, ca), dot(a, res.Mean)
		vc := 1 / (1/v - st.Tau)
		mc := vc * (m/v - st.Nu)
		aa := dot(a, a)
		x := make([]float64, d)
		out := make([]float64, 1)
		dens := func(s float64) float64 {
			for j := range x {
				x[j] = a[j] * s / aa
			}
			fs.LogBlock(st.Factor, x, out)
			return math.Exp(out[0] - (s-mc)*(s-mc)/(2*vc))
		}
		lo, hi := mc-20*math.Sqrt(vc), mc+20*math.Sqrt(vc)
		z := quad.Fixed(dens, lo, hi, 600, quad.Legendre{}, 0)
		mt := quad.Fixed(func(s float64) float64 { return s * dens(s) }, lo, hi, 600, quad.Legendre{}, 0) / z
		vt := quad.Fixed(func(s float64) float64 { return (s - mt) * (s - mt) * dens(s) }, lo, hi, 600, quad.Legendre{}, 0) / z
		worst = math.Max(worst, math.Max(math.Abs(mt-m)/math.Sqrt(v), math.Abs(vt/v-1)))
	}
	return worst
}

// probitSrc is a probit regression with invented data: labels s = +-1,
// P(s | x) = Phi(s (a + b x)), prior N(0, 2^2) on a and b.
const probitSrc = "x = [-2.1, -1.4, -0.9, -0.3, 0.2, 0.6, 1.1, 1.5, 2.2, 2.8, -0.5, 0.9]\n" +
	"s = [-1, -1, 1, -1, -1, 1, 1, 1, 1, 1, 1, -1]\n" +
	"-(a^2 + b^2)/8 + sum(log(erfc(-s*(a + b*x)/sqrt(2))/2))"

// clutterSrc is Minka's clutter problem (2001, section 3.3) in 1-D with
// invented data: p(y | th) = 0.5 N(y; th, 1) + 0.5 N(y; 0, 10), prior
// N(th; 0, 100).
const clutterSrc = "y = [2.9, 1.7, 3.4, -4.1, 2.2, 7.5, 2.6, 0.4, 3.1, -1.8, 2.4, 5.9, 1.9, 3.6, -6.2]\n" +
	"-th^2/200 + sum(log(0.5*exp(-(y - th)^2/2)/sqrt(2*pi) + 0.5*exp(-y^2/20)/sqrt(20*pi)))"

// poissonSrc is a Poisson regression with a log link and normal priors
// (invented data). Its terms k*(a + b*x) are linear in the parameters and
// fold into the Gaussian part, whose mean alone lies near a = 470, where
// every other factor, -exp(a + b*x), underflows: the sites must start at
// the factors' expansions, not flat.
const poissonSrc = "x = [-1, -0.5, 0, 0.5, 1, 1.5]\nk = [2, 3, 6, 8, 14, 19]\n" +
	"sum(ld_poisson(k, exp(a + b*x))) + ld_normal(a, 0, 3) + ld_normal(b, 0, 1)"

// TestFixedPointMoments: at convergence every factor's tilted moments equal
// the approximation's (EP's fixed-point condition, Minka 2001 section 3.2),
// checked to 1e-8 by an independent quadrature.
func TestFixedPointMoments(t *testing.T) {
	for _, src := range []string{probitSrc, clutterSrc, poissonSrc} {
		fs, _ := splitModel(t, src)
		res := run(t, fs, &Settings{Tol: 1e-13, MaxSweeps: 500})
		if !res.Converged {
			t.Fatalf("not converged: %v after %d sweeps (change %g)", res.Status, res.Sweeps, res.Change)
		}
		gap := tiltedCheck(t, fs, res)
		t.Logf("%d sites, %d sweeps, damping %g, gap %.2g (independent), %.2g (own), quadrature error %.2g",
			len(res.Sites), res.Sweeps, res.Damping, gap, res.MomentGap, res.QuadratureError)
		if gap > 1e-8 {
			t.Errorf("tilted and approximate moments differ by %g", gap)
		}
	}
}

// TestProbitAndClutter compares EP with the exact posterior by brute-force
// quadrature and reports the distances. EP is known to be very close to
// the exact moments and evidence for probit regression (Kuss and
// Rasmussen 2005, JMLR 6, from memory); the bounds here are loose.
func TestProbitAndClutter(t *testing.T) {
	cases := []struct {
		name           string
		src            string
		lo, hi         []float64
		meanTol, sdTol float64
		logZTol        float64
	}{
		{"probit", probitSrc, []float64{-10, -10}, []float64{10, 10}, 0.1, 0.1, 0.05},
		{"clutter", clutterSrc, []float64{-60}, []float64{60}, 0.1, 0.1, 0.1},
		{"poisson", poissonSrc, []float64{-2, -2}, []float64{4, 4}, 0.01, 0.02, 0.01},
	}
	for _, c := range cases {
		fs, ev := splitModel(t, c.src)
		res := run(t, fs, nil)
		if !res.Converged {
			t.Errorf("%s: not converged (%v)", c.name, res.Status)
		}
		logZ, mean, cov := exactMoments(ev.LogDensity, c.lo, c.hi, 300)
		me, se, ce := distances(res.Mean, res.Cov, mean, cov)
		t.Logf("%s: %d sites (%d one-dimensional), %d sweeps, EP mean %.6g cov %.6g; exact mean %.6g cov %.6g",
			c.name, len(res.Sites), res.OneDim, res.Sweeps, res.Mean, res.Cov, mean, cov)
		t.Logf("%s: mean error %.3g sd, sd error %.3g, corr error %.3g, log Z EP %.6f exact %.6f (diff %.3g)",
			c.name, me, se, ce, res.LogZ, logZ, res.LogZ-logZ)
		if me > c.meanTol || se > c.sdTol || math.Abs(res.LogZ-logZ) > c.logZTol {
			t.Errorf("%s: EP is further from the exact posterior than expected", c.name)
		}
	}
}
