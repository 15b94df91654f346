// These checks compare the package's Gaussian helpers with gonum's
// stat/distmv, an independent implementation.

package fit

import (
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/stat/distmv"
)

func distmvNormal(t *testing.T, g Gaussian) *distmv.Normal {
	t.Helper()
	n, ok := distmv.NewNormal(g.Mean, g.Cov, nil)
	if !ok {
		t.Fatalf("distmv.NewNormal refused %v", g)
	}
	return n
}

func TestKLGaussianAgainstDistmv(t *testing.T) {
	// gonum's distmv.KullbackLeibler.DistNormal, an independent implementation.
	q := normal([]float64{0.3, -1, 2}, cov3)
	p := normal([]float64{-0.5, 0.2, 1.5}, cov3b)
	for _, pair := range [][2]Gaussian{{q, p}, {p, q}, {q, q}} {
		got, err := KLGaussian(pair[0], pair[1])
		if err != nil {
			t.Fatal(err)
		}
		want := distmv.KullbackLeibler{}.DistNormal(distmvNormal(t, pair[0]), distmvNormal(t, pair[1]))
		if !scalar.EqualWithinAbsOrRel(got, want, 1e-13, 1e-12) {
			t.Errorf("KLGaussian = %v, distmv = %v", got, want)
		}
	}
}
