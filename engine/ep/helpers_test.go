package ep

import (
	"context"
	"math"
	"testing"

	"gonum.org/v1/gonum/integrate/quad"

	"bellcheck/engine/eval"
	"bellcheck/engine/model"
)

// funcFactor is a factor given by a function, for tests.
type funcFactor struct {
	log    func(x []float64) float64
	derivs func(x, grad, hess []float64) float64 // quadratic factors only
	dir    []float64
	quad   bool
}

// funcFactors implements Factors with plain functions.
type funcFactors struct {
	d  int
	c  float64
	fs []funcFactor
}

func (f *funcFactors) Dim() int                  { return f.d }
func (f *funcFactors) Len() int                  { return len(f.fs) }
func (f *funcFactors) Const() float64            { return f.c }
func (f *funcFactors) Quadratic(i int) bool      { return f.fs[i].quad }
func (f *funcFactors) Direction(i int) []float64 { return f.fs[i].dir }
func (f *funcFactors) LogBlock(i int, xs, out []float64) {
	for p := range out {
		out[p] = f.fs[i].log(xs[p*f.d : (p+1)*f.d])
	}
}
func (f *funcFactors) LogDerivs(i int, x, grad, hess []float64) float64 {
	return f.fs[i].derivs(x, grad, hess)
}

// gaussPrior is the factor -sum x_k^2 / (2 s^2) (a quadratic factor).
func gaussPrior(d int, s float64) funcFactor {
	return funcFactor{
		quad: true,
		log: func(x []float64) float64 {
			v := 0.0
			for _, xi := range x {
				v -= xi * xi / (2 * s * s)
			}
			return v
		},
		derivs: func(x, grad, hess []float64) float64 {
			v := 0.0
			for k, xi := range x {
				v -= xi * xi / (2 * s * s)
				grad[k] = -xi / (s * s)
				for j := range x {
					hess[k*d+j] = 0
				}
				hess[k*d+k] = -1 / (s * s)
			}
			return v
		},
	}
}

func splitModel(t testing.TB, src string) (*eval.Factors, *eval.Evaluator) {
	t.Helper()
	m, err := model.Parse(src)
	if err != nil {
		t.Fatalf("parse: %v", err)
	}
	fs, err := eval.SplitFactors(m)
	if err != nil {
		t.Fatalf("split: %v", err)
	}
	ev, err := eval.Compile(m)
	if err != nil {
		t.Fatalf("compile: %v", err)
	}
	return fs, ev
}

func run(t testing.TB, fs Factors, s *Settings) *Result {
	t.Helper()
	res, err := Run(context.Background(), fs, s)
	if err != nil {
		t.Fatalf("ep: %v", err)
	}
	return res
}

// exactMoments integrates exp(log p) by brute force with gonum's
// Gauss-Legendre rule on a box (nested in 2-D): log Z, mean and covariance.
func exactMoments(logp func([]float64) float64, lo, hi []float64, n int) (logZ float64, mean, cov []float64) {
	d := len(lo)
	x := make([]float64, d)
	// a shift keeps exp in range: the density at the box's centre region
	shift := math.Inf(-1)
	for k := 0; k <= 40; k++ {
		for j := 0; j <= 40; j++ {
			x[0] = lo[0] + (hi[0]-lo[0])*float64(k)/40
			if d > 1 {
				x[1] = lo[1] + (hi[1]-lo[1])*float64(j)/40
			}
			shift = math.Max(shift, logp(x))
		}
	}
	mom := func(g func(x []float64) float64) float64 {
		if d == 1 {
			return quad.Fixed(func(a float64) float64 {
				x := []float64{a}
				return g(x) * math.Exp(logp(x)-shift)
			}, lo[0], hi[0], n, quad.Legendre{}, 0)
		}
		return quad.Fixed(func(a float64) float64 {
			return quad.Fixed(func(b float64) float64 {
				x := []float64{a, b}
				return g(x) * math.Exp(logp(x)-shift)
			}, lo[1], hi[1], n, quad.Legendre{}, 0)
		}, lo[0], hi[0], n, quad.Legendre{}, 0)
	}
	z := mom(func([]float64) float64 { return 1 })
	mean = make([]float64, d)
	for k := range mean {
		mean[k] = mom(func(x []float64) float64 { return x[k] }) / z
	}
	cov = make([]float64, d*d)
	for k := 0; k < d; k++ {
		for j := 0; j <= k; j++ {
			v := mom(func(x []float64) float64 { return (x[k] - mean[k]) * (x[j] - mean[j]) }) / z
			cov[k*d+j], cov[j*d+k] = v, v
		}
	}
	return shift + math.Log(z), mean, cov
}

// distances compares a Gaussian with exact moments: the largest mean error
// in exact standard deviations, the largest |sd ratio - 1|, the largest
// correlation difference.
func distances(mean, cov, emean, ecov []float64) (meanErr, sdErr, corrErr float64) {
	d := len(mean)
	for k := 0; k < d; k++ {
		sk := math.Sqrt(ecov[k*d+k])
		meanErr = math.Max(meanErr, math.Abs(mean[k]-emean[k])/sk)
		sdErr = math.Max(sdErr, math.Abs(math.Sqrt(cov[k*d+k])/sk-1))
		for j := 0; j < k; j++ {
			r := cov[k*d+j] / math.Sqrt(cov[k*d+k]*cov[j*d+j])
			re := ecov[k*d+j] / math.Sqrt(ecov[k*d+k]*ecov[j*d+j])
			corrErr = math.Max(corrErr, math.Abs(r-re))
		}
	}
	return
}
