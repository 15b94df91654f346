package quadrature

import "math"

// condition finds, at the current outer point r.u[:k], the conditional mode
// of axes k.. by damped Newton steps from the prediction r.pred[k], and the
// Gaussian approximation there (the inverse of the negative Hessian of the
// axes k..): axis k's node map is centred at the mode with a half-width of
// Width times its standard deviation, and the inner axes' modes are
// predicted along the regression line (Naylor and Smith 1982: each
// conditional is recentred and rescaled). The innermost axis of a 3-D or
// 4-D rule, and of a 2-D slice's (quadrature.Curve), is conditioned from
// three values of log p instead (see conditionLine): the 3-D regression's
// slices took 504 derivatives and 453,054 points where Newton took 24,336
// and 444,606, with the same quantiles to 1e-15. A 2-D main rule keeps
// Newton: there the steps cost little, and the banana's x, whose
// conditional is flat-topped and bimodal, took 1.8 times the nodes with
// the parabola's width.
func (r *rule) condition(k int) {
	d := r.d
	m := d - k
	lv := &r.lv[k]
	copy(r.ut, r.u[:k])
	copy(r.ut[k:], r.pred[k][k:])
	ok := false
	if k == d-1 && (k >= 2 || (k == 1 && (r.noNodes || r.s.lineCondition))) && r.conditionLine(k) {
		lv.c = lv.mode[k]
		r.chooseMap(k, math.Sqrt(lv.sigma[0]))
		return
	}
	if k == 0 && r.pilot {
		// The pilot's mean and covariance: u = 0 with unit variances.
		copy(lv.mode, r.ut)
		clear(lv.sigma[:m*m])
		for i := 0; i < m; i++ {
			lv.sigma[i*m+i] = 1
		}
		ok = true
	}
	steps := maxNewton
	if r.s.NewtonSteps > 0 {
		steps = r.s.NewtonSteps
	}
	for it := 0; it < steps && !(k == 0 && r.pilot); it++ {
		f := r.derivsAt(k, r.ut)
		if math.IsNaN(f) || math.IsInf(f, 0) {
			break
		}
		if !r.factorSub(m) {
			break
		}
		ok = true
		copy(lv.mode, r.ut)
		cholInverse(r.subC, lv.sigma, r.col, m)
		// Newton step: (-H) step = g.
		copy(r.step[:m], r.gu[k:])
		cholSolve(r.subC, r.step, m)
		dec := 0.0
		for i := 0; i < m; i++ {
			dec += r.step[i] * r.gu[k+i]
		}
		if !(dec > 1e-8) || it == steps-1 {
			break
		}
		// Backtrack until log p does not fall.
		accepted := false
		for alpha := 1.0; alpha > 1e-3; alpha /= 2 {
			for i := 0; i < m; i++ {
				r.ut[k+i] = lv.mode[k+i] + alpha*r.step[i]
			}
			r.toZ(r.ut)
			r.points++
			if f2 := r.p.LogDensity(r.z); f2 >= f-1e-12*math.Abs(f) {
				accepted = true
				break
			}
		}
		if !accepted {
			break
		}
	}
	if !ok {
		// No curvature at the prediction: keep it, with the whitened scale.
		copy(lv.mode, r.ut)
		copy(lv.mode[k:], r.pred[k][k:])
		clear(lv.sigma[:m*m])
		for i := 0; i < m; i++ {
			lv.sigma[i*m+i] = 1
		}
	}
	lv.c = lv.mode[k]
	s00 := lv.sigma[0]
	for a := k + 1; a < d; a++ {
		lv.slope[a] = lv.sigma[(a-k)*m] / s00
	}
	r.chooseMap(k, math.Sqrt(s00))
}

// derivsAt returns log p at u and writes the gradient (r.gu) and the
// negative Hessian of axes k.. (r.sub, (d-k)^2) in u coordinates.
func (r *rule) derivsAt(k int, u []float64) float64 {
	d := r.d
	m := d - k
	r.toZ(u)
	f := r.p.LogDensityDerivs(r.z, r.gz, r.hz)
	r.derivs++
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return f
	}
	// gu = L^T gv: column a of L has entries in rows b >= a.
	for a := k; a < d; a++ {
		s := 0.0
		for b := a; b < d; b++ {
			s += r.L[b*d+a] * r.gz[r.perm[b]]
		}
		r.gu[a] = s
	}
	// sub = -(L^T Hv L) restricted to axes k..
	for a := k; a < d; a++ {
		for c := a; c < d; c++ {
			s := 0.0
			for i := a; i < d; i++ {
				li := r.L[i*d+a]
				if li == 0 {
					continue
				}
				hi := r.perm[i] * d
				for j := c; j < d; j++ {
					s += li * r.hz[hi+r.perm[j]] * r.L[j*d+c]
				}
			}
			r.sub[(a-k)*m+(c-k)] = -s
			r.sub[(c-k)*m+(a-k)] = -s
		}
	}
	for _, v := range r.sub[:m*m] {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return math.NaN()
		}
	}
	return f
}

// factorSub factors r.sub into r.subC, adding a multiple of the identity
// when it is not positive definite (a damped Newton step).
func (r *rule) factorSub(m int) bool {
	if cholesky(r.subC, r.sub, m) {
		return true
	}
	scale := 0.0
	for i := 0; i < m; i++ {
		scale = max(scale, math.Abs(r.sub[i*m+i]))
	}
	lambda := 1e-3*scale + 1e-6
	for try := 0; try < 30; try++ {
		for i := 0; i < m; i++ {
			r.sub[i*m+i] += lambda
		}
		if cholesky(r.subC, r.sub, m) {
			return true
		}
		lambda *= 2
	}
	return false
}

// conditionLine finds the innermost axis's conditional mode and variance
// from log p at three points (the vertex and curvature of the parabola
// through the prediction and one standard deviation either side), which
// costs three evaluations of log p where a Newton step costs a gradient
// and a Hessian of every parameter (the innermost axis has one point of
// these per node of the outer axes: most of the rule's derivatives). It
// starts from the previous outer node's standard deviation, moves to the
// vertex while it lies over half a standard deviation away (at most four
// times), and reports false where log p is not finite at the three points
// or not concave through them; condition then takes Newton steps. For a
// Gaussian conditional the parabola is exact.
func (r *rule) conditionLine(k int) bool {
	lv := &r.lv[k]
	sd := math.Sqrt(lv.sigma[0])
	if !(sd > 0) || math.IsInf(sd, 0) {
		sd = 1
	}
	c := r.ut[k]
	at := func(u float64) float64 {
		r.ut[k] = u
		r.toZ(r.ut)
		r.points++
		return r.p.LogDensity(r.z)
	}
	for it := 0; it < 4; it++ {
		h := sd / 2
		f0, fp, fm := at(c), at(c+h), at(c-h)
		if !finiteAll(f0, fp, fm) {
			return false
		}
		curv := (fp - 2*f0 + fm) / (h * h)
		if !(curv < 0) {
			return false
		}
		step := -(fp - fm) / (2 * h) / curv
		next := 1 / math.Sqrt(-curv)
		if math.Abs(step) <= next/2 && next >= sd/2 && next <= 2*sd {
			lv.mode[k] = c + step
			copy(lv.mode[:k], r.u[:k])
			lv.sigma[0] = next * next
			return true
		}
		// Move at most three standard deviations at a time.
		c += max(-3*sd, min(3*sd, step))
		sd = max(sd/4, min(4*sd, next))
	}
	return false
}

func finiteAll(v ...float64) bool {
	for _, x := range v {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return false
		}
	}
	return true
}
