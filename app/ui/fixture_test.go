package ui

import (
	"math"
	"time"

	"gonum.org/v1/gonum/mat"

	"bellcheck/app/figure"
	"bellcheck/engine"
	"bellcheck/engine/gauss"
)

// gaussResult builds, for the page's tests, the result the engine would give
// for a Gaussian target with the given mean and covariance: the exact
// moments, marginals and pair densities in closed form (the marginals of a
// Gaussian are Gaussian), the closed-form 39/86/99 % levels, and one fit per
// method with the given mean offset (in exact sd) for the Laplace fit. The
// divergences are inputs of the table, not computed here.
func gaussResult(names []string, mean []float64, cov [][]float64, laplaceShift float64) *engine.Result {
	d := len(names)
	r := &engine.Result{Params: names, Form: "log_density"}
	sd := make([]float64, d)
	corr := make([][]float64, d)
	for i := range d {
		sd[i] = math.Sqrt(cov[i][i])
	}
	for i := range d {
		corr[i] = make([]float64, d)
		for j := range d {
			corr[i][j] = cov[i][j] / (sd[i] * sd[j])
		}
	}
	q := make([][3]float64, d)
	for i := range d {
		q[i] = [3]float64{mean[i] - 1.959964*sd[i], mean[i], mean[i] + 1.959964*sd[i]}
		r.Scales = append(r.Scales, "identity")
	}
	r.Exact = engine.Exact{LogZ: -3.2, LogZErr: 1e-6, Mean: mean, MeanErr: make([]float64, d), Cov: cov, SD: sd, Corr: corr,
		Mode: mean, GridMode: mean, Quantiles: q}
	mk := func(shift float64, kl float64) *engine.Fit {
		m := append([]float64(nil), mean...)
		m[0] += shift * sd[0]
		f := &engine.Fit{Mean: m, Cov: cov, SD: sd, Corr: corr, KLqp: kl, KLpq: 2 * kl, Hellinger: math.Sqrt(kl) / 3, Coverage95: 0.95 - kl,
			Converged: true, Iterations: 7}
		for i := range d {
			f.Interval95 = append(f.Interval95, [2]float64{m[i] - 1.959964*sd[i], m[i] + 1.959964*sd[i]})
			f.MeanErrSD = append(f.MeanErrSD, (m[i]-mean[i])/sd[i])
			f.SDRatio = append(f.SDRatio, 1)
		}
		return f
	}
	lz, elbo := -3.0, -3.25
	r.Fits[engine.Laplace] = mk(laplaceShift, 0.05)
	r.Fits[engine.Laplace].LogZ = &lz
	e1, e2 := lz-r.Exact.LogZ, elbo-r.Exact.LogZ
	r.Fits[engine.Laplace].EvidenceErr = &e1
	r.Fits[engine.ReverseKL] = mk(0, 0.01)
	r.Fits[engine.ReverseKL].ELBO = &elbo
	r.Fits[engine.ReverseKL].EvidenceErr = &e2
	r.Fits[engine.ForwardKL] = mk(0, 0.02)
	r.Modes = []engine.Mode{{X: mean, LogDensity: 1.5, Mass: 1, PositiveDefinite: true}}
	r.Grid = engine.GridInfo{Points: make([]int, d)}
	for i := range d {
		r.Grid.Lo = append(r.Grid.Lo, mean[i]-6*sd[i])
		r.Grid.Hi = append(r.Grid.Hi, mean[i]+6*sd[i])
		r.Grid.Points[i] = 61
	}
	r.Plots = &engine.Plots{}
	axis := func(i int) []float64 {
		xs := make([]float64, 61)
		for k := range xs {
			xs[k] = r.Grid.Lo[i] + (r.Grid.Hi[i]-r.Grid.Lo[i])*float64(k)/60
		}
		return xs
	}
	normal := func(x, m, s float64) float64 { z := (x - m) / s; return math.Exp(-z*z/2) / (s * math.Sqrt(2*math.Pi)) }
	for i := range d {
		m1 := engine.Marginal1D{Param: i, X: axis(i)}
		for _, x := range m1.X {
			m1.Exact = append(m1.Exact, normal(x, mean[i], sd[i]))
			m1.Fits[engine.ReverseKL] = append(m1.Fits[engine.ReverseKL], normal(x, mean[i], sd[i]))
			m1.Fits[engine.ForwardKL] = append(m1.Fits[engine.ForwardKL], normal(x, mean[i], sd[i]))
			shift := 0.0
			if i == 0 {
				shift = laplaceShift * sd[0]
			}
			m1.Fits[engine.Laplace] = append(m1.Fits[engine.Laplace], normal(x, mean[i]+shift, sd[i]))
		}
		r.Plots.Marginals = append(r.Plots.Marginals, m1)
	}
	for i := range d {
		for j := i + 1; j < d; j++ {
			p := engine.Marginal2D{I: i, J: j, X: axis(i), Y: axis(j), Ellipses: engine.Ellipses{}}
			a, b, c := cov[i][i], cov[i][j], cov[j][j]
			det := a*c - b*b
			peak := 1 / (2 * math.Pi * math.Sqrt(det))
			for _, y := range p.Y {
				for _, x := range p.X {
					dx, dy := x-mean[i], y-mean[j]
					qf := (c*dx*dx - 2*b*dx*dy + a*dy*dy) / det
					p.Density = append(p.Density, peak*math.Exp(-qf/2))
				}
			}
			q, err := gauss.Prepare(gauss.Gaussian{Mean: []float64{mean[i], mean[j]}, Cov: mat.NewSymDense(2, []float64{a, b, b, c})})
			if err != nil {
				panic(err)
			}
			var lines [3][][2]float64
			for k, mass := range figure.Masses {
				p.Levels[k] = peak * (1 - mass)
				lines[k] = q.Ellipse(0, 1, mass, 64)
			}
			p.Ellipses[engine.ReverseKL] = lines
			r.Plots.Pairs = append(r.Plots.Pairs, p)
		}
	}
	return r
}

func nowForTest() time.Time { return time.Unix(0, 0) }
