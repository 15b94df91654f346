package grid

import (
	"math"

	"gonum.org/v1/gonum/mat"

	"bellcheck/engine/internal/targettest"
)

// gaussian returns the normal log-density (normalised, through gonum's
// Cholesky factorisation) scaled by exp(logScale).
func gaussian(mean []float64, cov [][]float64, logScale float64) *targettest.Func {
	d := len(mean)
	c := mat.NewSymDense(d, nil)
	for i := 0; i < d; i++ {
		for j := 0; j < d; j++ {
			c.SetSym(i, j, cov[i][j])
		}
	}
	var ch mat.Cholesky
	if !ch.Factorize(c) {
		panic("covariance not positive definite")
	}
	norm := -0.5*float64(d)*math.Log(2*math.Pi) - 0.5*ch.LogDet()
	return &targettest.Func{D: d, LogP: func(x []float64) float64 {
		r := mat.NewVecDense(d, nil)
		for i := range x {
			r.SetVec(i, x[i]-mean[i])
		}
		var s mat.VecDense
		if err := ch.SolveVecTo(&s, r); err != nil {
			panic(err)
		}
		return norm - 0.5*mat.Dot(r, &s) + logScale
	}}
}

func boxAround(mean, sd []float64, k float64) Box {
	b := Box{}
	for i := range mean {
		b.Lo = append(b.Lo, mean[i]-k*sd[i])
		b.Hi = append(b.Hi, mean[i]+k*sd[i])
	}
	return b
}

func close(a, b, tol float64) bool { return math.Abs(a-b) <= tol }
