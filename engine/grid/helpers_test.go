package grid

import (
	"math"

	"gonum.org/v1/gonum/mat"

	"bellcheck/engine/target"
)

// funcDensity is a hand-written target.Density for the tests (no
// derivatives: the grid does not use them).
type funcDensity struct {
	d int
	f func(x []float64) float64
}

func (p *funcDensity) Dim() int                       { return p.d }
func (p *funcDensity) LogDensity(x []float64) float64 { return p.f(x) }
func (p *funcDensity) LogDensityDerivs(x, g, h []float64) float64 {
	panic("not used by the grid")
}
func (p *funcDensity) LogDensityBlock(cols [][]float64, out []float64) {
	x := make([]float64, p.d)
	for i := range out {
		for k := range x {
			x[k] = cols[k][i]
		}
		out[i] = p.f(x)
	}
}
func (p *funcDensity) Clone() target.Density { c := *p; return &c }

// gaussian returns the normal log-density (normalised, through gonum's
// Cholesky factorisation) scaled by exp(logScale).
func gaussian(mean []float64, cov [][]float64, logScale float64) *funcDensity {
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
	return &funcDensity{d: d, f: func(x []float64) float64 {
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
