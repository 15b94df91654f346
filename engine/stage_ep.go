package engine

import (
	"errors"
	"fmt"
	"math"
	"strings"

	"gonum.org/v1/gonum/mat"

	"bellcheck/engine/ep"
	"bellcheck/engine/eval"
	"bellcheck/engine/fit"
	"bellcheck/engine/transform"
)

// Diagnostic codes of the EP fit (described with the others in
// diagnostics.go).
const (
	CodeEPSingleFactor = "ep_single_factor"
	CodeEPImproperSite = "ep_improper_site"
	CodeEPQuadrature   = "ep_quadrature"
)

// epMaxWork bounds the factor evaluations of one EP sweep (common practice
// for keeping the page responsive: about a second natively at the most).
const epMaxWork = 4e6

// fitEP is the EP stage: the model split into factors (eval.SplitFactors),
// on the fitting scale, and expectation propagation over them
// (engine/ep), started from the highest mode. It is absent, with a
// diagnostic saying why, where the model is a single factor (EP would be
// the forward-KL fit), where a sweep would be too costly, or where EP
// fails.
func (a *analysis) fitEP() error {
	a.tr.enter(stageEP)
	fs, err := eval.SplitFactors(a.m)
	if err != nil {
		a.avail.drop(EP.quantity(), CodeFitFailed)
		a.diag.add(CodeFitFailed, SeverityError, "No EP fit: %v.", err)
		return nil
	}
	sf := newScaledFactors(fs, a.maps)
	sites, work := 0, 0.0
	for i := 0; i < sf.Len(); i++ {
		switch {
		case sf.Quadratic(i):
		case sf.Direction(i) != nil:
			sites++
			work += 64
		default:
			sites++
			work += math.Pow([]float64{24, 24, 12, 8, 6}[a.d], float64(a.d))
		}
	}
	if sites == 1 {
		a.avail.drop(EP.quantity(), CodeEPSingleFactor)
		a.diag.add(CodeEPSingleFactor, SeverityInfo,
			"No EP fit: besides its Gaussian terms the density is a single factor (no term splits into one factor per data element, and a Gaussian likelihood folds into a Gaussian term), so EP would be moment matching of the whole density: the forward-KL fit.")
		return nil
	}
	if work > epMaxWork {
		a.avail.drop(EP.quantity(), CodeFitFailed)
		a.diag.add(CodeFitFailed, SeverityInfo,
			"No EP fit: %d factors need %.2g evaluations per sweep, more than the %.2g allowed.", sites, work, float64(epMaxWork))
		return nil
	}
	var start []float64
	switch {
	case len(a.modes.fitModes) > 0:
		start = a.modes.fitModes[0].X
	case a.avail.presentAt(QuantityMean, 0) && allFinite(a.ref.fitting.Mean):
		start = a.ref.fitting.Mean
	}
	// Refined cubatures of full sites stop at 8192 nodes (a 9^4 rule):
	// beyond, a sweep would take seconds in the browser.
	updates := 0
	r, err := ep.Run(a.ctx, sf, &ep.Settings{Start: start, Tol: epTol, MaxCubatureNodes: 1 << 13, QuadTol: epQuadratureWarn,
		Tick: func() error {
			updates++
			a.tr.tick(updates, float64(10*sites))
			return a.ctx.Err()
		}})
	if ctxErr := a.ctx.Err(); ctxErr != nil {
		return ctxErr
	}
	switch {
	case errors.Is(err, ep.ErrSingleFactor):
		a.avail.drop(EP.quantity(), CodeEPSingleFactor)
		a.diag.add(CodeEPSingleFactor, SeverityInfo,
			"No EP fit: the density is a single factor that cannot be split and has no Gaussian term, so EP would be moment matching of the whole density: the forward-KL fit.")
		return nil
	case err != nil:
		a.avail.drop(EP.quantity(), CodeFitFailed)
		a.diag.add(CodeFitFailed, SeverityError, "No EP fit: %s.%s", strings.TrimPrefix(err.Error(), "ep: "), a.epBoundHint())
		return nil
	}
	if math.IsInf(r.QuadratureError, 0) || math.IsNaN(r.QuadratureError) || math.IsInf(r.MomentGap, 0) {
		a.avail.drop(EP.quantity(), CodeFitFailed)
		a.diag.add(CodeFitFailed, SeverityError,
			"No EP fit: the tilted distribution of a factor (the factor times the rest of the approximation) could not be integrated at the end: its quadrature gives no finite moments.%s", a.epBoundHint())
		return nil
	}
	cov := mat.NewSymDense(a.d, nil)
	for i := 0; i < a.d; i++ {
		for j := i; j < a.d; j++ {
			cov.SetSym(i, j, r.Cov[i*a.d+j])
		}
	}
	g, err := fit.MomentMatch(r.Mean, cov)
	if err != nil {
		// EP ended on a Gaussian that is not proper (a degenerate
		// covariance: a hierarchical scale driven to its bound makes the
		// effects and their mean move as one).
		a.avail.drop(EP.quantity(), CodeFitFailed)
		why := "its covariance is not positive definite"
		if errors.Is(err, fit.ErrNonFinite) {
			why = "its mean or covariance is not finite"
		}
		a.diag.add(CodeFitFailed, SeverityError,
			"No EP fit: the approximation it ended on is not a proper Gaussian (%s: some parameters move as one, or a scale was driven to its bound).%s", why, a.epBoundHint())
		return nil
	}
	nSites, exact := len(r.Sites), r.Exact
	run := Fit{Iterations: r.Sweeps, Converged: r.Converged, Residual: r.Change, Factors: &nSites, ExactFactors: &exact}
	if !math.IsNaN(r.LogZ) && !math.IsInf(r.LogZ, 0) {
		lz := r.LogZ
		run.LogZ = &lz
	}
	if !r.Converged && (r.SkippedLast > 0 || r.UnsettledTilted > 0) {
		// A run that neither settled nor could update its sites has no
		// state worth showing: its last iterate can be far from any
		// moment of the density (a misleading number is worse than none).
		a.avail.drop(EP.quantity(), CodeEPImproperSite)
		a.diag.add(CodeEPImproperSite, SeverityWarning,
			"No EP fit: it did not converge in %d sweeps and could not update every site (in its last sweep %d of %d site updates were skipped: a cavity, or the approximation after an update, was not a proper Gaussian; %d tilted distributions could not be integrated).%s",
			r.Sweeps, r.SkippedLast, nSites, r.UnsettledTilted, a.epBoundHint())
		return nil
	}
	a.fits = append(a.fits, fitted{method: EP, g: g, run: run})
	if !r.Converged {
		a.diag.add(CodeNoConvergence, SeverityWarning,
			"The EP fit did not converge in %d sweeps (the last changed it by %.2g of a standard deviation, at a damping of %.2g); its last state is shown, marked as not converged.",
			r.Sweeps, r.Change, r.Damping)
	}
	if r.SkippedLast > 0 || r.UnsettledTilted > 0 {
		a.diag.add(CodeEPImproperSite, SeverityWarning,
			"EP could not update every site: in its last sweep %d of %d site updates were skipped (the site's cavity, or the approximation after the update, was not a proper Gaussian), and %d tilted distributions could not be integrated at the end (an improper cavity and a factor that does not decay); its log Z is absent where one could not.",
			r.SkippedLast, nSites, r.UnsettledTilted)
	}
	switch {
	case r.QuadratureError > epQuadratureWarn:
		a.diag.add(CodeEPQuadrature, SeverityWarning,
			"EP's tilted moments carry a quadrature error of about %.2g (relative to the approximation's standard deviations) that finer rules do not remove: a factor's tilted distribution is far from Gaussian.%s",
			r.QuadratureError, a.epBoundHint())
	case r.QuadratureError > 1e-6:
		a.diag.add(CodeEPQuadrature, SeverityInfo,
			"EP's tilted moments carry a quadrature error of about %.2g of the approximation's standard deviations with the finest rule it tried, below the 1e-4 the comparisons resolve.",
			r.QuadratureError)
	}
	return nil
}

// epQuadratureWarn is the quadrature error of EP's tilted moments, in the
// approximation's standard deviations, above which it is a warning; below,
// down to 1e-6, a note: the comparisons resolve means to about 1e-4 sd.
// It is also where EP stops refining its rules (ep.Settings.QuadTol): the
// Gauss-Hermite rules converge slowly on tilted distributions far from
// normal, and a finer rule multiplies every sweep's cost (with one factor
// per reading, the 3-D sensor benchmark's tilted moments carry 1.2e-5 at
// 8 nodes a side, its default).
const epQuadratureWarn = 1e-4

// epTol ends EP's sweeps when one moves the approximation by less than
// this many of its standard deviations (ep.Settings.Tol, whose default is
// 1e-9): a sweep shrinks the change about sixfold near the fixed point on
// the benchmarks, so what remains is some 2e-8 sd, far below the 1e-4 the
// comparisons resolve; the 3-D sensor benchmark's EP took 10 sweeps
// instead of 13, its means moved by 2e-9.
const epTol = 1e-7

// scaledFactors is the model's factors on the fitting scale: each factor
// at x = x(z), and one factor log(dx/dz) per transformed parameter.
type scaledFactors struct {
	fs       *eval.Factors
	maps     []transform.Map
	jac      []int // the transformed parameters
	identity bool  // every parameter on the original scale
	xs       []float64
	gx, hx   []float64
}

var _ ep.Factors = (*scaledFactors)(nil)

func newScaledFactors(fs *eval.Factors, maps []transform.Map) *scaledFactors {
	d := fs.Dim()
	sf := &scaledFactors{fs: fs, maps: maps, identity: true, gx: make([]float64, d), hx: make([]float64, d*d)}
	for k, m := range maps {
		if !m.Scale.IsIdentity() {
			sf.jac = append(sf.jac, k)
			sf.identity = false
		}
	}
	return sf
}

func (sf *scaledFactors) Dim() int       { return sf.fs.Dim() }
func (sf *scaledFactors) Len() int       { return sf.fs.Len() + len(sf.jac) }
func (sf *scaledFactors) Const() float64 { return sf.fs.Const() }

// Quadratic: a quadratic factor stays quadratic where every parameter it
// involves is on the original scale; the log-Jacobian of a log scale (z
// itself) is linear; the support factor of a parameter fitted on a log or
// logit scale is 0 wherever z is finite.
func (sf *scaledFactors) Quadratic(i int) bool {
	if i >= sf.fs.Len() {
		return sf.maps[sf.jac[i-sf.fs.Len()]].Scale == transform.Log
	}
	if k := sf.fs.Support(i); k >= 0 && !sf.maps[k].Scale.IsIdentity() {
		return true
	}
	if !sf.fs.Quadratic(i) {
		return false
	}
	if sf.identity {
		return true
	}
	a := sf.fs.Direction(i)
	if a == nil {
		return false
	}
	for k, v := range a {
		if v != 0 && !sf.maps[k].Scale.IsIdentity() {
			return false
		}
	}
	return true
}

// Direction: a factor of a^T x stays one of a^T z where every parameter
// it involves is on the original scale, or where it involves only one.
func (sf *scaledFactors) Direction(i int) []float64 {
	d := sf.fs.Dim()
	if i >= sf.fs.Len() {
		a := make([]float64, d)
		a[sf.jac[i-sf.fs.Len()]] = 1
		return a
	}
	a := sf.fs.Direction(i)
	if a == nil || sf.identity {
		return a
	}
	n, scaled := 0, false
	for k, v := range a {
		if v != 0 {
			n++
			scaled = scaled || !sf.maps[k].Scale.IsIdentity()
		}
	}
	if n > 1 && scaled {
		return nil
	}
	return a
}

func (sf *scaledFactors) LogBlock(i int, zs, out []float64) {
	d := sf.fs.Dim()
	if i >= sf.fs.Len() {
		k := sf.jac[i-sf.fs.Len()]
		for p := range out {
			out[p] = sf.maps[k].LogJacobian(zs[p*d+k])
		}
		return
	}
	if sf.identity {
		sf.fs.LogBlock(i, zs, out)
		return
	}
	if cap(sf.xs) < len(zs) {
		sf.xs = make([]float64, len(zs))
	}
	xs := sf.xs[:len(zs)]
	for p := 0; p < len(out); p++ {
		for k := 0; k < d; k++ {
			xs[p*d+k] = sf.maps[k].ToOriginal(zs[p*d+k])
		}
	}
	sf.fs.LogBlock(i, xs, out)
}

// LogDerivs applies the chain rule through x(z): grad_z = grad_x x'(z),
// hess_z = diag(x') hess_x diag(x') + diag(grad_x x”).
func (sf *scaledFactors) LogDerivs(i int, z, grad, hess []float64) float64 {
	d := sf.fs.Dim()
	clear(grad)
	clear(hess)
	if i >= sf.fs.Len() {
		k := sf.jac[i-sf.fs.Len()]
		_, _, _, lj, dlj, d2lj := sf.maps[k].Derivs(z[k])
		grad[k], hess[k*d+k] = dlj, d2lj
		return lj
	}
	if k := sf.fs.Support(i); k >= 0 && !sf.maps[k].Scale.IsIdentity() {
		return 0 // inside the support wherever z is finite
	}
	var x, dx, d2x [4]float64
	for k := 0; k < d; k++ {
		x[k], dx[k], d2x[k], _, _, _ = sf.maps[k].Derivs(z[k])
	}
	v := sf.fs.LogDerivs(i, x[:d], sf.gx, sf.hx)
	for k := 0; k < d; k++ {
		grad[k] = sf.gx[k] * dx[k]
		for j := 0; j < d; j++ {
			hess[k*d+j] = sf.hx[k*d+j] * dx[k] * dx[j]
		}
		hess[k*d+k] += sf.gx[k] * d2x[k]
	}
	return v
}

func allFinite(x []float64) bool {
	for _, v := range x {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return false
		}
	}
	return len(x) > 0
}

// epBoundHint is the sentence EP's warnings and failures end with where
// bounded parameters are fitted as they are: on the bounded scale the
// cavity reaches past the bound, where the factors are zero (the normal
// model with a 1/s prior warned of a quadrature error of 0.073 there and
// converged to 1.2e-5 on log s); empty otherwise.
func (a *analysis) epBoundHint() string {
	var cut []string // bounded parameters fitted as they are
	for k, b := range a.bounded {
		if b {
			cut = append(cut, a.names[k])
		}
	}
	if len(cut) == 0 {
		return ""
	}
	their := "its bounded scale"
	if len(cut) > 1 {
		their = "their bounded scales"
	}
	return fmt.Sprintf(" With %s fitted on %s the tilted distributions are cut off at the bound; on the log or logit scale they are smooth.",
		list(cut), their)
}
