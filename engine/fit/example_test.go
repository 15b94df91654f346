package fit_test

import (
	"context"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"bellcheck/engine/fit"
	"bellcheck/engine/target"
)

// quartic is log p = -x^4/4, whose mode has zero curvature.
type quartic struct{}

func (quartic) Dim() int                       { return 1 }
func (quartic) LogDensity(x []float64) float64 { return -math.Pow(x[0], 4) / 4 }
func (quartic) LogDensityDerivs(x, g, h []float64) float64 {
	g[0], h[0] = -x[0]*x[0]*x[0], -3*x[0]*x[0]
	return -math.Pow(x[0], 4) / 4
}
func (q quartic) LogDensityBlock(cols [][]float64, out []float64) {
	for i, x := range cols[0] {
		out[i] = q.LogDensity([]float64{x})
	}
}
func (q quartic) Clone() target.Density { return q }

// The mode of exp(-x^4/4) has no curvature, so there is no Laplace fit, but
// the reverse-KL Gaussian exists: variance 1/sqrt(3).
func Example() {
	ctx := context.Background()
	modes, err := fit.FindModes(ctx, quartic{}, [][]float64{{1}}, nil, nil)
	if err != nil {
		fmt.Println(err)
		return
	}
	_, err = fit.Laplace(modes[0])
	fmt.Println("Laplace:", err != nil)

	init := fit.Gaussian{Mean: []float64{0.5}, Cov: mat.NewSymDense(1, []float64{1})}
	vf, err := fit.ReverseKL(ctx, quartic{}, init, fit.Settings{})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("mean %.6f, variance %.6f (1/sqrt 3 = %.6f), converged %v\n",
		math.Abs(vf.Mean[0]), vf.Cov.At(0, 0), 1/math.Sqrt(3), vf.Converged)
	// Output:
	// Laplace: true
	// mean 0.000000, variance 0.577350 (1/sqrt 3 = 0.577350), converged true
}
