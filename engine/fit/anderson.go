package fit

// anderson accelerates a fixed-point iteration theta ← G(theta) from its
// last few iterates (Anderson mixing; type II in the terms of Walker and Ni,
// SIAM J. Numer. Anal. 49, 2011). With f = G(theta) - theta, the proposal
// is theta + f - (ΔΘ + ΔF) γ, with γ minimising |f - ΔF γ| over the stored
// differences of theta and f between successive iterates. It keeps all its
// storage from construction and does not allocate.
type anderson struct {
	n, m       int
	count      int         // differences stored, at most m
	head       int         // ring position of the next difference
	dTheta, dF [][]float64 // ring of differences
	prevTheta  []float64
	prevF      []float64
	havePrev   bool
	gram       []float64 // m×m normal equations
	chol       []float64
	rhs        []float64
}

func newAnderson(n, m int) anderson {
	a := anderson{n: n, m: m, prevTheta: make([]float64, n), prevF: make([]float64, n),
		gram: make([]float64, m*m), chol: make([]float64, m*m), rhs: make([]float64, m)}
	a.dTheta = make([][]float64, m)
	a.dF = make([][]float64, m)
	for i := 0; i < m; i++ {
		a.dTheta[i] = make([]float64, n)
		a.dF[i] = make([]float64, n)
	}
	return a
}

// push records the current iterate and its residual, storing the difference
// from the previous one.
func (a *anderson) push(theta, f []float64) {
	if a.m == 0 {
		return
	}
	if a.havePrev {
		dt, df := a.dTheta[a.head], a.dF[a.head]
		for i := range theta {
			dt[i] = theta[i] - a.prevTheta[i]
			df[i] = f[i] - a.prevF[i]
		}
		a.head = (a.head + 1) % a.m
		if a.count < a.m {
			a.count++
		}
	}
	copy(a.prevTheta, theta)
	copy(a.prevF, f)
	a.havePrev = true
}

// reset forgets the stored differences, keeping the last iterate.
func (a *anderson) reset() { a.count, a.head = 0, 0 }

// clear forgets everything, for when the map itself changes.
func (a *anderson) clear() { a.reset(); a.havePrev = false }

// propose writes the accelerated iterate into out and reports whether one
// exists (at least one stored difference and a solvable least-squares
// problem).
func (a *anderson) propose(out, theta, f []float64) bool {
	k := a.count
	if k == 0 {
		return false
	}
	g, c, r := a.gram[:k*k], a.chol[:k*k], a.rhs[:k]
	trace := 0.0
	for i := 0; i < k; i++ {
		for j := 0; j <= i; j++ {
			s := 0.0
			for t := 0; t < a.n; t++ {
				s += a.dF[i][t] * a.dF[j][t]
			}
			g[i*k+j], g[j*k+i] = s, s
		}
		trace += g[i*k+i]
		s := 0.0
		for t := 0; t < a.n; t++ {
			s += a.dF[i][t] * f[t]
		}
		r[i] = s
	}
	if !(trace > 0) {
		return false
	}
	// A small ridge keeps nearly dependent differences from blowing up γ.
	for i := 0; i < k; i++ {
		g[i*k+i] += 1e-10 * trace / float64(k)
	}
	if !cholesky(c, g, k) {
		return false
	}
	cholSolve(c, r, k)
	for t := 0; t < a.n; t++ {
		x := theta[t] + f[t]
		for i := 0; i < k; i++ {
			x -= r[i] * (a.dTheta[i][t] + a.dF[i][t])
		}
		out[t] = x
	}
	return allFinite(out)
}
