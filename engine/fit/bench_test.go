package fit

import (
	"context"
	"testing"
)

// blocks joins independent densities into one over the concatenated
// coordinates (log p is the sum), for benchmarks in three and four
// dimensions with non-Gaussian parts.
func blocks(parts ...*fnDensity) *fnDensity {
	d := 0
	for _, p := range parts {
		d += p.Dim()
	}
	grads, hessians := make([][]float64, len(parts)), make([][]float64, len(parts))
	for i, p := range parts {
		grads[i], hessians[i] = make([]float64, p.D), make([]float64, p.D*p.D)
	}
	return newFn(d, func(x, g, h []float64) float64 {
		for i := range h {
			h[i] = 0
		}
		f, off := 0.0, 0
		for pi, p := range parts {
			k := p.Dim()
			pg, ph := grads[pi], hessians[pi]
			f += p.Derivs(x[off:off+k], pg, ph)
			for i := 0; i < k; i++ {
				g[off+i] = pg[i]
				for j := 0; j < k; j++ {
					h[(off+i)*d+off+j] = ph[i*k+j]
				}
			}
			off += k
		}
		return f
	})
}

func benchVariational(b *testing.B, p *fnDensity, init Gaussian, diag bool) {
	n := 0
	p.Count = &n
	b.ReportAllocs()
	iters := 0
	for i := 0; i < b.N; i++ {
		var vf VariationalFit
		var err error
		if diag {
			vf, err = MeanField(context.Background(), p, init, Settings{})
		} else {
			vf, err = ReverseKL(context.Background(), p, init, Settings{})
		}
		if err != nil {
			b.Fatal(err)
		}
		iters += vf.Iterations
	}
	b.ReportMetric(float64(n)/float64(b.N), "evals/op")
	b.ReportMetric(float64(iters)/float64(b.N), "steps/op")
}

var (
	bananaInit = Gaussian{Mean: []float64{0, 5}, Cov: sym(2, 100, 0, 0, 1)} // the Laplace fit at the mode
	gauss4     = correlatedGaussians[3]
)

func BenchmarkReverseKLBanana(b *testing.B) { benchVariational(b, banana(0.05), bananaInit, false) }
func BenchmarkMeanFieldBanana(b *testing.B) { benchVariational(b, banana(0.05), bananaInit, true) }

func BenchmarkReverseKLGaussian4D(b *testing.B) {
	benchVariational(b, gaussianTarget(gauss4.mean, gauss4.prec, gauss4.c), identityInit(4), false)
}

func BenchmarkMeanFieldGaussian4D(b *testing.B) {
	benchVariational(b, gaussianTarget(gauss4.mean, gauss4.prec, gauss4.c), identityInit(4), true)
}

// Non-Gaussian targets in one, three and four dimensions, for the time
// budgets of the whole analysis.
func BenchmarkReverseKLLogGamma1D(b *testing.B) {
	benchVariational(b, logGamma(3, 2), identityInit(1), false)
}

func BenchmarkReverseKLBananaLogGamma3D(b *testing.B) {
	init := Gaussian{Mean: []float64{0, 5, 0.4}, Cov: sym(3, 100, 0, 0, 0, 1, 0, 0, 0, 0.33)}
	benchVariational(b, blocks(banana(0.05), logGamma(3, 2)), init, false)
}

func BenchmarkReverseKLTwoBananas4D(b *testing.B) {
	init := Gaussian{Mean: []float64{0, 5, 0, 5}, Cov: sym(4, 100, 0, 0, 0, 0, 1, 0, 0, 0, 0, 100, 0, 0, 0, 0, 1)}
	benchVariational(b, blocks(banana(0.05), banana(0.05)), init, false)
}

func BenchmarkMeanFieldTwoBananas4D(b *testing.B) {
	init := Gaussian{Mean: []float64{0, 5, 0, 5}, Cov: sym(4, 100, 0, 0, 0, 0, 1, 0, 0, 0, 0, 100, 0, 0, 0, 0, 1)}
	benchVariational(b, blocks(banana(0.05), banana(0.05)), init, true)
}

func BenchmarkFindModesBanana10Starts(b *testing.B) {
	p := banana(0.05)
	n := 0
	p.Count = &n
	starts := [][]float64{{-20, -10}, {15, 8}, {0, 0}, {5, -3}, {-8, 4}, {25, -30}, {-3, 12}, {10, 10}, {-15, 0}, {1, 4.5}}
	b.ReportAllocs()
	for i := 0; i < b.N; i++ {
		modes, err := FindModes(context.Background(), p, starts, nil, nil)
		if err != nil || len(modes) != 1 {
			b.Fatal(modes, err)
		}
	}
	b.ReportMetric(float64(n)/float64(b.N), "evals/op")
}
