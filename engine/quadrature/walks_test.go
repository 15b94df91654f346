package quadrature

import (
	"math"
	"testing"
)

var walkProbs = []float64{0.025, 0.5, 0.975}

// A correlated normal in 3-D, every marginal N(0, 1) (b = 0.8 a + e with
// var e = 0.36, c = 0.5 b + e' with var e' = 0.75): the quantiles of the
// two inner axes' parameters from the rule's walks against the normal's,
// sqrt(2) erfinv(2p - 1) (Go's math library), and their error estimates
// against the actual errors as probabilities.
func TestWalkQuantilesNormal3D(t *testing.T) {
	pr := compile(t, "param a\nparam b\nparam c\n-0.5*(a^2 + (b-0.8*a)^2/0.36 + (c - 0.5*b)^2/0.75)\n")
	res := pr.integrate(t, Settings{})
	for _, k := range res.Order[1:] {
		q, est, err := res.WalkQuantiles(k, walkProbs)
		if err != nil {
			t.Fatal(err)
		}
		for i, p := range walkProbs {
			want := math.Sqrt2 * math.Erfinv(2*p-1)
			e := math.Abs(q[i] - want)
			// The error as a probability: the density times the distance.
			eProb := e * math.Exp(-want*want/2) / math.Sqrt(2*math.Pi)
			if e > 5e-5 || eProb > est {
				t.Errorf("parameter %d: quantile %g = %.12g, want %.12g (off by %.2g, %.2g as a probability; estimate %.2g)", k, p, q[i], want, e, eProb, est)
			}
		}
	}
	if _, _, err := res.WalkQuantiles(res.Order[0], walkProbs); err == nil {
		t.Errorf("the outermost axis has no walks of its own, want an error")
	}
}

// The funnel v ~ N(0, 3), x | v ~ N(0, e^(v/2)): x's marginal has a peak
// no walk along x resolves, but given v it is normal. Its quantiles,
// P(x <= q) = E_v Phi(q e^(-v/2)), by the trapezoid rule in v (step 5e-4
// on [-30, 30]) and bisection, by a script of ours: 9.7509153400.
func TestWalkQuantilesFunnel(t *testing.T) {
	pr := compile(t, "param v\nparam x\n-v^2/18 - x^2/(2*exp(v)) - v/2\n")
	res := pr.integrate(t, Settings{})
	q, est, err := res.WalkQuantiles(1, walkProbs)
	if err != nil {
		t.Fatal(err)
	}
	want := []float64{-9.7509153400, 0, 9.7509153400}
	sd := math.Sqrt(math.Exp(4.5)) // var x = E e^v = e^(9/2)
	for i := range want {
		if e := math.Abs(q[i] - want[i]); e > 1e-4*sd {
			t.Errorf("quantile %g of x = %.10g, want %.10g (off by %.2g sd)", walkProbs[i], q[i], want[i], e/sd)
		}
	}
	if est > 1e-4 {
		t.Errorf("error estimate %.2g, want it small", est)
	}
}

// The banana (x ~ N(0, 10), y | x ~ N(5 - 0.05 x^2, 1)): y's conditional
// given x is a ridge far narrower than the spacing of x's nodes, so the
// walks do not give y's distribution function; the estimate must say so,
// covering the actual error. The truth, P(y <= q) = E_x Phi(q - 5 + 0.05
// x^2), by the trapezoid rule in x here. The estimate at a normal's guess
// of the 2.5 % quantile already exceeds walkScreen, so no quantiles are
// returned; without the screen, the estimate at the quantiles found must
// cover their error.
func TestWalkQuantilesBananaFlagged(t *testing.T) {
	pr := compile(t, "param x\nparam y\n-x^2/200 - (y + 0.05*x^2 - 5)^2/2\n")
	res := pr.integrate(t, Settings{})
	q, est, err := res.WalkQuantiles(1, walkProbs)
	if err != nil || q != nil || !(est > walkScreen) {
		t.Fatalf("got quantiles %v, estimate %.2g, error %v: want none, with an estimate over %g", q, est, err, walkScreen)
	}
	defer func(s float64) { walkScreen = s }(walkScreen)
	walkScreen = math.Inf(1)
	q, est, err = res.WalkQuantiles(1, walkProbs)
	if err != nil {
		t.Fatal(err)
	}
	worst := 0.0
	for i, p := range walkProbs {
		worst = max(worst, math.Abs(bananaYCDF(q[i])-p))
	}
	if !(worst <= est) || est < 1e-3 {
		t.Errorf("error estimate %.2g against an actual error of %.2g (as probabilities): want it to cover it and flag it (>= 1e-3)", est, worst)
	}
	t.Logf("quantiles %v, estimate %.2g, actual %.2g", q, est, worst)
}

// The walks' density of the 3-D normal's inner parameters against the
// normal density (Go's math library), and of the funnel's x, whose
// marginal no walk along x resolves, against E_v N(x; 0, e^(v/2)) by the
// trapezoid rule in v; each estimate must cover the error.
func TestWalkDensity(t *testing.T) {
	xs := []float64{-3, -1.7, -0.4, 0, 0.9, 2.2, 3.5}
	pr := compile(t, "param a\nparam b\nparam c\n-0.5*(a^2 + (b-0.8*a)^2/0.36 + (c - 0.5*b)^2/0.75)\n")
	res := pr.integrate(t, Settings{})
	for _, k := range res.Order[1:] {
		dens, est, err := res.WalkDensity(k, xs)
		if err != nil {
			t.Fatal(err)
		}
		worst := 0.0
		for i, x := range xs {
			worst = max(worst, math.Abs(dens[i]-math.Exp(-x*x/2)/math.Sqrt(2*math.Pi)))
		}
		if rel := worst / (1 / math.Sqrt(2*math.Pi)); rel > 1e-4 || rel > est {
			t.Errorf("parameter %d: density off by %.2g of its peak, estimate %.2g", k, rel, est)
		}
	}
	pr = compile(t, "param v\nparam x\n-v^2/18 - x^2/(2*exp(v)) - v/2\n")
	res = pr.integrate(t, Settings{})
	xs = []float64{-20, -5, -1, -0.3, 0.3, 1, 5, 20}
	dens, est, err := res.WalkDensity(1, xs)
	if err != nil {
		t.Fatal(err)
	}
	want := func(x float64) float64 {
		const h = 1e-3
		s := 0.0
		for v := -30.0; v <= 30; v += h {
			sd := math.Exp(v / 2)
			s += math.Exp(-v*v/18) / math.Sqrt(18*math.Pi) * math.Exp(-0.5*(x/sd)*(x/sd)) / (sd * math.Sqrt(2*math.Pi)) * h
		}
		return s
	}
	worst, peak := 0.0, 0.0
	for i, x := range xs {
		w := want(x)
		peak = max(peak, w)
		worst = max(worst, math.Abs(dens[i]-w))
	}
	if rel := worst / peak; rel > 1e-4 || rel > est {
		t.Errorf("funnel's x: density off by %.2g of its largest value here, estimate %.2g", rel, est)
	}
	t.Logf("funnel's x: off by %.2g of %.3g, estimate %.2g", worst/peak, peak, est)
}
