package examples

import (
	"math"
	"slices"

	"gonum.org/v1/gonum/diff/fd"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/optimize"
)

// lorenzCost is a strong-constraint 4D-Var cost for the starting state of
// the Lorenz-63 system (Lorenz 1963; sigma 10, rho 28, beta 8/3), written
// here in plain Go, apart from the model language: readings of x (and of z
// where zSeen is set) at times t, noise sd obsSD, a background guess bg of
// sd bgSD, and the classical Runge-Kutta method with substeps equal steps
// between output times, from 0 to the first (Butcher, Numerical Methods for
// Ordinary Differential Equations, 2016, section 23).
type lorenzCost struct {
	t            []float64
	substeps     int
	xSeen, zSeen []float64
	obsSD        float64
	bg           [3]float64
	bgSD         float64
}

// lorenzRate is the Lorenz-63 vector field.
func lorenzRate(s [3]float64) [3]float64 {
	return [3]float64{10 * (s[1] - s[0]), s[0]*(28-s[2]) - s[1], s[0]*s[1] - 8.0/3*s[2]}
}

// rk4 takes one classical Runge-Kutta step of length h.
func rk4(s [3]float64, h float64) [3]float64 {
	add := func(a, b [3]float64, c float64) [3]float64 {
		return [3]float64{a[0] + c*b[0], a[1] + c*b[1], a[2] + c*b[2]}
	}
	k1 := lorenzRate(s)
	k2 := lorenzRate(add(s, k1, h/2))
	k3 := lorenzRate(add(s, k2, h/2))
	k4 := lorenzRate(add(s, k3, h))
	for i := range s {
		s[i] += h / 6 * (k1[i] + 2*k2[i] + 2*k3[i] + k4[i])
	}
	return s
}

// value returns J at the starting state x0.
func (c *lorenzCost) value(x0 []float64) float64 {
	j := 0.0
	for i := range 3 {
		j += (x0[i] - c.bg[i]) * (x0[i] - c.bg[i])
	}
	j /= 2 * c.bgSD * c.bgSD
	s := [3]float64{x0[0], x0[1], x0[2]}
	prev := 0.0
	misfit := 0.0
	for i, ti := range c.t {
		h := (ti - prev) / float64(c.substeps)
		for range c.substeps {
			s = rk4(s, h)
		}
		prev = ti
		misfit += (s[0] - c.xSeen[i]) * (s[0] - c.xSeen[i])
		if c.zSeen != nil {
			misfit += (s[2] - c.zSeen[i]) * (s[2] - c.zSeen[i])
		}
	}
	return j + misfit/(2*c.obsSD*c.obsSD)
}

// localMinimum is a local minimum of a cost found by a local search.
type localMinimum struct {
	x []float64
	j float64
}

// localMinima finds the distinct local minima of f inside the box [lo, hi]
// by local searches from starts spread over the box by a Halton sequence
// (bases 2, 3, 5): gonum's BFGS with central-difference gradients, then
// Newton's method with central-difference Hessians (gonum's diff/fd), which
// settles in the narrow, ill-conditioned minima of a chaotic cost where
// BFGS's line search gives up. A search's end counts as a minimum when it
// lies inside the box, its finite-difference Hessian is positive definite
// and the Newton step there is below 1e-6 in every coordinate; two ends
// within tol of each other (in every coordinate) are one minimum. The
// minima come deepest first.
func localMinima(f func([]float64) float64, lo, hi []float64, starts int, tol float64) []localMinimum {
	d := len(lo)
	grad := func(g, x []float64) {
		fd.Gradient(g, f, x, &fd.Settings{Formula: fd.Central, Step: 1e-6})
	}
	p := optimize.Problem{Func: f, Grad: grad}
	var found []localMinimum
	primes := []int{2, 3, 5, 7}
	for i := 1; i <= starts; i++ {
		x := make([]float64, d)
		for k := range x {
			x[k] = lo[k] + (hi[k]-lo[k])*vanDerCorput(i, primes[k])
		}
		res, err := optimize.Minimize(p, x, &optimize.Settings{GradientThreshold: 1e-7, MajorIterations: 2000}, &optimize.BFGS{})
		if err != nil && res == nil {
			continue
		}
		xm, ok := newtonPolish(f, grad, res.X)
		if !ok {
			continue
		}
		inside := true
		for k := range xm {
			inside = inside && xm[k] > lo[k] && xm[k] < hi[k]
		}
		if !inside {
			continue
		}
		known := false
		for _, m := range found {
			same := true
			for k := range xm {
				same = same && math.Abs(m.x[k]-xm[k]) < tol
			}
			known = known || same
		}
		if !known {
			found = append(found, localMinimum{x: slices.Clone(xm), j: f(xm)})
		}
	}
	slices.SortFunc(found, func(a, b localMinimum) int {
		switch {
		case a.j < b.j:
			return -1
		case a.j > b.j:
			return 1
		}
		return 0
	})
	return found
}

// newtonPolish runs damped Newton steps (halved until f does not rise by
// more than rounding)
// from x with a central-difference Hessian, and reports whether it ends at
// a minimum: a positive definite Hessian and a Newton step below 1e-6 in
// every coordinate.
func newtonPolish(f func([]float64) float64, grad func(g, x []float64), x []float64) ([]float64, bool) {
	d := len(x)
	x = slices.Clone(x)
	g := make([]float64, d)
	h := mat.NewSymDense(d, nil)
	var step mat.VecDense
	trial := make([]float64, d)
	for range 50 {
		grad(g, x)
		fd.Hessian(h, f, x, &fd.Settings{Formula: fd.Central, Step: 1e-5})
		var ch mat.Cholesky
		if !ch.Factorize(h) {
			return x, false
		}
		if err := ch.SolveVecTo(&step, mat.NewVecDense(d, g)); err != nil {
			return x, false
		}
		if mat.Norm(&step, math.Inf(1)) < 1e-6 {
			return x, true
		}
		fx := f(x)
		for t := 1.0; t > 1e-6; t /= 2 {
			for k := range x {
				trial[k] = x[k] - t*step.AtVec(k)
			}
			if f(trial) <= fx+1e-10*(1+math.Abs(fx)) {
				copy(x, trial)
				break
			}
		}
	}
	return x, false
}

// vanDerCorput returns the i-th element of the van der Corput sequence in
// base b (one coordinate of a Halton sequence).
func vanDerCorput(i, b int) float64 {
	f, r := 1.0, 0.0
	for ; i > 0; i /= b {
		f /= float64(b)
		r += f * float64(i%b)
	}
	return r
}
