package quadrature

import (
	"context"
	"testing"
)

// Benchmarks of whole integrations (pilot included) on typical models; the
// points used are reported as a metric.
func benchIntegrate(b *testing.B, src string) {
	pr := compile(b, src)
	var res *Result
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		var err error
		res, err = Integrate(context.Background(), pr.p, pr.start, Settings{Maps: pr.maps})
		if err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(res.Points), "points")
}

func BenchmarkNormalSD2D(b *testing.B) {
	benchIntegrate(b, dataLine("y", readings)+"param m\nparam s in [0, inf]\n-log(s) + sum(ld_normal(y, m, s))\n")
}

func BenchmarkGauss2D(b *testing.B) { benchIntegrate(b, equicorrelated(2, 0.9)) }

func BenchmarkRegression3D(b *testing.B) {
	benchIntegrate(b, dataLine("t", []float64{0, 1, 2, 3, 4, 5})+dataLine("y", []float64{1.2, 1.9, 3.4, 3.6, 5.1, 5.5})+
		"param a\nparam b\nparam s in [0, inf]\n-log(s) + sum(ld_normal(y, a + b*t, s))\n")
}

func BenchmarkGauss3D(b *testing.B) { benchIntegrate(b, equicorrelated(3, 0.95)) }

func BenchmarkFunnel3D(b *testing.B) {
	benchIntegrate(b, "param v\nparam x1\nparam x2\nld_normal(v, 0, 3) + ld_normal(x1, 0, exp(v/2)) + ld_normal(x2, 0, exp(v/2))\n")
}

func BenchmarkGauss4D(b *testing.B) { benchIntegrate(b, equicorrelated(4, 0.95)) }
