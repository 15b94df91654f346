package ep

import (
	"math"

	"bellcheck/engine/special"
)

// grow returns a slice of n values backed by *buf.
func grow(buf *[]float64, n int) []float64 {
	if cap(*buf) < n {
		*buf = make([]float64, n)
	}
	return (*buf)[:n]
}

// update refines one site; it reports false when the update was skipped.
func (r *runner) update(st *site) bool {
	if st.a != nil {
		return r.update1(st)
	}
	return r.updateN(st)
}

// cavity1 returns the approximation's mean m and variance v of s = a^T x
// and the cavity's natural parameters on s, exp(-pc s^2/2 + hc s) (r.sa =
// cov a on return). The cavity may be improper (pc <= 0): the tilted
// distribution can still be proper where the factor decays.
func (r *runner) cavity1(st *site) (m, v, pc, hc float64) {
	mulVec(r.sa, r.q.cov, st.a, r.d)
	v = dot(st.a, r.sa)
	m = dot(st.a, r.q.mean)
	return m, v, 1/v - st.tau, m/v - st.nu
}

// Tilted moments by Gauss-Hermite quadrature in the whitened coordinates of
// a base Gaussian b: the integral of f times the cavity is that of
// f N_cavity / N_b against N_b. The first base is the approximation q (at
// the fixed point the tilted distribution has q's moments, so the ratio is
// smooth there); when the tilted moments found differ much from the base's,
// they become the base and the quadrature is repeated (at most maxPasses
// times), so that a factor much sharper than its cavity, or a cavity far
// from the factor's mass, is still resolved.

// maxPasses bounds the quadratures of one tilted distribution.
const maxPasses = 4

// baseClose reports whether moments found (m1, v1) are close enough to the
// base's (mb, vb) for the base to resolve them (common practice: a tenth of
// a standard deviation, a fifth in the log-variance).
func baseClose(m1, v1, mb, vb float64) bool {
	return math.Abs(m1-mb) <= 0.1*math.Sqrt(vb) && math.Abs(math.Log(v1/vb)) <= 0.2
}

// tilted1 returns J, the log of the integral of f(s) exp(-pc s^2/2 + hc s)
// over s = a^T x, and the mean and variance of that tilted distribution;
// settled is false when the bases did not settle (with an improper cavity:
// the tilted distribution is not proper either). The factor is evaluated on
// the line x = mean + cov a (s - m)/v of the approximation, where a^T x = s
// (the factor depends on x only through s). NaN values of the factor count
// as zero density; undefined counts them.
func (r *runner) tilted1(st *site, rl rule1d, m, v, pc, hc float64) (J, mt, vt float64, settled bool, undefined int) {
	mb, vb := m, v
	for pass := 0; ; pass++ {
		var und int
		J, mt, vt, und = r.tilted1At(st, rl, m, v, pc, hc, mb, vb)
		undefined += und
		if !(vt > 0) || math.IsNaN(mt) || math.IsInf(vt, 0) {
			return J, mt, vt, false, undefined
		}
		if baseClose(mt, vt, mb, vb) {
			return J, mt, vt, true, undefined
		}
		if pass+1 == maxPasses {
			return J, mt, vt, pc > 0, undefined
		}
		mb, vb = mt, vt
	}
}

// tilted1At is tilted1 with the base N(mb, vb): with s = mb + sb z,
// J = log E_z[f(s) exp(-pc s^2/2 + hc s + z^2/2) sb sqrt(2 pi)].
func (r *runner) tilted1At(st *site, rl rule1d, m, v, pc, hc, mb, vb float64) (J, mt, vt float64, undefined int) {
	n, d := len(rl.z), r.d
	xs := grow(&r.xs, n*d)
	lf := grow(&r.lf, n)
	sb := math.Sqrt(vb)
	for k, z := range rl.z {
		t := (mb + sb*z - m) / v
		for j := 0; j < d; j++ {
			xs[k*d+j] = r.q.mean[j] + r.sa[j]*t
		}
	}
	r.fs.LogBlock(st.factor, xs, lf)
	lnorm := math.Log(sb) + 0.5*math.Log(2*math.Pi)
	mx := math.Inf(-1)
	for k, l := range lf {
		if math.IsNaN(l) {
			undefined++
			l = math.Inf(-1)
		}
		z := rl.z[k]
		s := mb + sb*z
		lf[k] = rl.lw[k] + l + lnorm + s*(hc-pc*s/2) + z*z/2
		mx = max(mx, lf[k])
	}
	if math.IsInf(mx, 0) || math.IsNaN(mx) {
		return mx, math.NaN(), math.NaN(), undefined
	}
	var z0, z1 float64
	for k, l := range lf {
		e := special.Exp(l - mx)
		lf[k] = e
		z0 += e
		z1 += e * rl.z[k]
	}
	mz := z1 / z0
	var z2 float64
	for k, e := range lf {
		dz := rl.z[k] - mz
		z2 += e * dz * dz
	}
	return mx + math.Log(z0), mb + sb*mz, vb * z2 / z0, undefined
}

// update1 refines a rank-one site.
func (r *runner) update1(st *site) bool {
	m, v, pc, hc := r.cavity1(st)
	_, mt, vt, settled, _ := r.tilted1(st, r.rule1, m, v, pc, hc)
	if !settled {
		return false
	}
	tauNew, nuNew := 1/vt-pc, mt/vt-hc
	d := r.d
	for step := r.damping; step >= r.s.MinDamping; step /= 2 {
		dtau := step * (tauNew - st.tau)
		dnu := step * (nuNew - st.nu)
		den := 1 + dtau*v
		if !(den > 1e-12) || !(v/den > 0) || math.IsInf(v/den, 0) {
			continue // the approximation would not be proper: a smaller step
		}
		// Sherman-Morrison: cov' = cov - dtau/den (cov a)(cov a)^T,
		// mean' = mean + (cov a)(dnu - dtau m)/den.
		shift := (dnu - dtau*m) / den
		for i := 0; i < d; i++ {
			r.q.mean[i] += r.sa[i] * shift
			r.q.lin[i] += dnu * st.a[i]
			for j := 0; j < d; j++ {
				r.q.cov[i*d+j] -= dtau / den * r.sa[i] * r.sa[j]
				r.q.prec[i*d+j] += dtau * st.a[i] * st.a[j]
			}
		}
		st.tau += dtau
		st.nu += dnu
		return true
	}
	return false
}

// tiltedN computes the log-normaliser, mean and covariance of f(x) times
// the cavity r.cav into mt and ct, by the tensor rule in the whitened
// coordinates of a base Gaussian (first the approximation q, then the
// tilted moments found, as tilted1).
func (r *runner) tiltedN(st *site, rl ruleNd, mt, ct []float64) (logZ float64, undefined int) {
	d := r.d
	mb := append([]float64(nil), r.q.mean...)
	lb := append([]float64(nil), r.q.lcov...)
	for pass := 0; ; pass++ {
		var und int
		logZ, und = r.tiltedNAt(st, rl, mb, lb, mt, ct)
		undefined += und
		r.pause()
		if pass+1 == maxPasses || math.IsInf(logZ, 0) || math.IsNaN(logZ) {
			return logZ, undefined
		}
		close := true
		for i := 0; i < d; i++ {
			vb := 0.0
			for j := 0; j <= i; j++ {
				vb += lb[i*d+j] * lb[i*d+j]
			}
			close = close && baseClose(mt[i], ct[i*d+i], mb[i], vb)
		}
		if close || !cholesky(lb, ct, d) {
			return logZ, undefined
		}
		copy(mb, mt)
	}
}

// tiltedNAt is tiltedN with the base N(mb, L L^T).
func (r *runner) tiltedNAt(st *site, rl ruleNd, mb, L, mt, ct []float64) (logZ float64, undefined int) {
	d := r.d
	n := len(rl.lw)
	xs := grow(&r.xs, n*d)
	lf := grow(&r.lf, n)
	for k := 0; k < n; k++ {
		z := rl.z[k*d : (k+1)*d]
		for i := 0; i < d; i++ {
			s := mb[i]
			for j := 0; j <= i; j++ {
				s += L[i*d+j] * z[j]
			}
			xs[k*d+i] = s
		}
	}
	r.fs.LogBlock(st.factor, xs, lf)
	// log N_cavity(x) - log N_base(x) = -(x-mc)^T Pc (x-mc)/2 - log det
	// cov_c / 2 + |z|^2/2 + log det L.
	lnorm := -0.5 * (2 * sumLogDiag(r.cav.lcov, d))
	lnorm += sumLogDiag(L, d)
	mx := math.Inf(-1)
	// The cavity's mean and precision, read once (the loops below run over
	// every node of every site's rule: a sixth of the 3-D sensor's
	// analysis in WebAssembly, where each field read through r is a load).
	mean, prec := r.cav.mean[:d], r.cav.prec[:d*d]
	var dx [4]float64
	for k, l := range lf {
		if math.IsNaN(l) {
			undefined++
			l = math.Inf(-1)
		}
		z := rl.z[k*d : (k+1)*d]
		x := xs[k*d : (k+1)*d]
		zz := 0.0
		for i := range d {
			dx[i] = x[i] - mean[i]
			zz += z[i] * z[i]
		}
		qf := 0.0
		for i := range d {
			row := prec[i*d : i*d+d]
			s := 0.0
			for j := range d {
				s += row[j] * dx[j]
			}
			qf += dx[i] * s
		}
		lf[k] = rl.lw[k] + l + lnorm - qf/2 + zz/2
		mx = max(mx, lf[k])
	}
	if math.IsInf(mx, 0) || math.IsNaN(mx) {
		return mx, undefined
	}
	var mz [4]float64
	var cz [16]float64
	z0 := 0.0
	for k, l := range lf {
		e := special.Exp(l - mx)
		lf[k] = e
		z0 += e
		z := rl.z[k*d : (k+1)*d]
		for i := range d {
			mz[i] += e * z[i]
		}
	}
	for i := 0; i < d; i++ {
		mz[i] /= z0
	}
	var zc [4]float64
	for k, e := range lf {
		z := rl.z[k*d : (k+1)*d]
		for i := range d {
			zc[i] = z[i] - mz[i]
		}
		for i := range d {
			ezi := e * zc[i]
			for j := 0; j <= i; j++ {
				cz[i*d+j] += ezi * zc[j]
			}
		}
	}
	// mt = mb + L mz, ct = L cz L^T.
	for i := 0; i < d; i++ {
		s := mb[i]
		for j := 0; j <= i; j++ {
			s += L[i*d+j] * mz[j]
		}
		mt[i] = s
		for j := 0; j <= i; j++ {
			cz[i*d+j] /= z0
			cz[j*d+i] = cz[i*d+j]
		}
	}
	var lc [16]float64
	for i := 0; i < d; i++ {
		for j := 0; j < d; j++ {
			s := 0.0
			for k := 0; k <= i; k++ {
				s += L[i*d+k] * cz[k*d+j]
			}
			lc[i*d+j] = s
		}
	}
	for i := 0; i < d; i++ {
		for j := 0; j <= i; j++ {
			s := 0.0
			for k := 0; k <= j; k++ {
				s += lc[i*d+k] * L[j*d+k]
			}
			ct[i*d+j], ct[j*d+i] = s, s
		}
	}
	return mx + math.Log(z0), undefined
}

// sumLogDiag returns the sum of the logs of a triangular factor's diagonal.
func sumLogDiag(l []float64, d int) float64 {
	s := 0.0
	for i := 0; i < d; i++ {
		s += math.Log(l[i*d+i])
	}
	return s
}

// formCavity sets r.cav to the approximation without the site and reports
// whether it is a proper Gaussian.
func (r *runner) formCavity(st *site) bool {
	copy(r.cav.prec, r.q.prec)
	copy(r.cav.lin, r.q.lin)
	addSite(r.cav, st, -1, r.d)
	return r.cav.moments()
}

// updateN refines a full site.
func (r *runner) updateN(st *site) bool {
	d := r.d
	if !r.q.moments() || !r.formCavity(st) {
		return false
	}
	mt, ct := make([]float64, d), make([]float64, d*d)
	logZ, _ := r.tiltedN(st, r.ruleN, mt, ct)
	if math.IsInf(logZ, 0) || math.IsNaN(logZ) {
		return false
	}
	// The tilted distribution's natural parameters, less the cavity's.
	lt, pt := make([]float64, d*d), make([]float64, d*d)
	if !cholesky(lt, ct, d) {
		return false
	}
	cholInverse(pt, lt, r.tmp, d)
	linNew := make([]float64, d)
	mulVec(linNew, pt, mt, d)
	for i := 0; i < d; i++ {
		linNew[i] -= r.cav.lin[i]
	}
	for i := range pt {
		pt[i] -= r.cav.prec[i]
	}
	for step := r.damping; step >= r.s.MinDamping; step /= 2 {
		for i := range pt {
			r.trial.prec[i] = r.q.prec[i] + step*(pt[i]-st.prec[i])
		}
		for i := 0; i < d; i++ {
			r.trial.lin[i] = r.q.lin[i] + step*(linNew[i]-st.lin[i])
		}
		if !r.trial.moments() {
			continue
		}
		for i := range pt {
			st.prec[i] += step * (pt[i] - st.prec[i])
		}
		for i := 0; i < d; i++ {
			st.lin[i] += step * (linNew[i] - st.lin[i])
		}
		r.q.copyFrom(r.trial)
		st.logZ = logZ
		return true
	}
	return false
}

// finish makes the last pass at the fixed point: every site's cavity and
// tilted moments (with the run's rule and a finer one), the moment gap, the
// quadrature error and the EP estimate of log Z (Minka 2001, section 3.2,
// in natural parameters):
//
//	log Z = c + phi(q) + sum_i [log Z_i + phi(cavity_i) - phi(q)],
//
// with phi the log-integral of exp(-x^T P x/2 + h^T x), Z_i the factor's
// expectation under its normalised cavity and c the constant of the
// log-density and of its Gaussian part.
func (r *runner) finish(res *Result) *Result {
	d := r.d
	r.rebuild()
	q := r.q
	q.moments()
	res.Mean = append([]float64(nil), q.mean...)
	res.Cov = append([]float64(nil), q.cov...)
	res.Skipped = r.skipped
	res.Damping = r.damping
	res.Nodes1D, res.NodesPerAxis = r.s.Nodes1D, r.s.NodesPerAxis
	res.MomentGap, res.QuadratureError, res.Undefined = 0, 0, 0
	r.quadErr1, r.quadErrN = 0, 0
	res.NegativeSites, res.ImproperCavities, res.UnsettledTilted, res.Sites = 0, 0, 0, nil
	logZ := r.konst + q.phi
	fine1 := newRule1d(r.s.Nodes1D*3/2 + 1)
	var fineN ruleNd
	if !allOneDim(r.sites) {
		fineN = newRuleNd(d, r.s.NodesPerAxis*3/2+1)
	}
	mt, ct := make([]float64, d), make([]float64, d*d)
	mt2, ct2 := make([]float64, d), make([]float64, d*d)
	for k := range r.sites {
		st := &r.sites[k]
		out := Site{Factor: st.factor, LogZ: math.NaN()}
		if st.a != nil {
			out.Direction = append([]float64(nil), st.a...)
			out.Tau, out.Nu = st.tau, st.nu
			if st.tau < 0 {
				res.NegativeSites++
			}
		} else {
			out.Prec = append([]float64(nil), st.prec...)
			out.Lin = append([]float64(nil), st.lin...)
			if !cholesky(r.tmp, st.prec, d) && !allZero(st.prec) {
				res.NegativeSites++
			}
		}
		var lz float64 // log Z_i + phi(cavity_i) - phi(q)
		var und int
		if st.a != nil {
			m, v, pc, hc := r.cavity1(st)
			if !(pc > 0) {
				res.ImproperCavities++
			}
			J, m1, v1, settled, u := r.tilted1(st, r.rule1, m, v, pc, hc)
			_, m2, v2, _, _ := r.tilted1(st, fine1, m, v, pc, hc)
			und = u
			if !settled {
				res.UnsettledTilted++
				logZ = math.NaN()
			}
			res.MomentGap = max(res.MomentGap, gap1(m1, v1, m, v))
			r.quadErr1 = max(r.quadErr1, gap1(m2, v2, m1, v1))
			// phi(cavity) - phi(q) is the difference of the one-dimensional
			// log-normalisers of s (the conditional parts cancel).
			lz = J - phi1(1/v, m/v)
			out.LogZ = J - phi1(pc, hc)
		} else {
			if !r.formCavity(st) {
				res.ImproperCavities++
				res.UnsettledTilted++
				logZ = math.NaN()
				res.Sites = append(res.Sites, out)
				continue
			}
			var l float64
			l, und = r.tiltedN(st, r.ruleN, mt, ct)
			r.tiltedN(st, fineN, mt2, ct2)
			res.MomentGap = max(res.MomentGap, gapN(mt, ct, q.mean, q.cov, d))
			r.quadErrN = max(r.quadErrN, gapN(mt2, ct2, mt, ct, d))
			out.LogZ = l
			lz = l + r.cav.phi - q.phi
		}
		res.Undefined += und
		logZ += lz
		res.Sites = append(res.Sites, out)
		r.pause()
	}
	res.QuadratureError = max(r.quadErr1, r.quadErrN)
	if math.IsNaN(res.MomentGap) {
		res.MomentGap = math.Inf(1)
	}
	res.LogZ = logZ
	return res
}

// pause calls Settings.Tick inside a site's work (a 3-D tilted
// distribution's passes took 14 ms natively), for a caller that must
// pause often; its error, a cancellation, is taken at the next site.
func (r *runner) pause() {
	if r.s.Tick != nil {
		_ = r.s.Tick()
	}
}

// phi1 is the log of the integral of exp(-p s^2/2 + h s), p > 0.
func phi1(p, h float64) float64 {
	return h*h/(2*p) - 0.5*math.Log(p) + 0.5*math.Log(2*math.Pi)
}

func allZero(v []float64) bool {
	for _, x := range v {
		if x != 0 {
			return false
		}
	}
	return true
}

// gap1 compares the moments (m1, v1) of s with (m, v): the mean difference
// in standard deviations and the relative variance difference.
func gap1(m1, v1, m, v float64) float64 {
	g := max(math.Abs(m1-m)/math.Sqrt(v), math.Abs(v1/v-1))
	if math.IsNaN(g) {
		return math.Inf(1)
	}
	return g
}

// gapN compares two Gaussians' moments as gap1, per coordinate, with the
// covariances relative to the product of the second's standard deviations.
func gapN(m1, c1, m, c []float64, d int) float64 {
	g := 0.0
	for i := 0; i < d; i++ {
		si := math.Sqrt(c[i*d+i])
		g = max(g, math.Abs(m1[i]-m[i])/si)
		for j := 0; j <= i; j++ {
			g = max(g, math.Abs(c1[i*d+j]-c[i*d+j])/(si*math.Sqrt(c[j*d+j])))
		}
	}
	if math.IsNaN(g) {
		return math.Inf(1)
	}
	return g
}
