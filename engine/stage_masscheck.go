package engine

import (
	"context"
	"math"
	"math/rand/v2"
	"slices"

	"gonum.org/v1/gonum/mat"

	"bellcheck/engine/fit"
	"bellcheck/engine/internal/dense"
	"bellcheck/engine/special"
	"bellcheck/engine/target"
)

// checkMass tests a grid's log Z against importance sampling around a
// Gaussian fit g (named by around in the diagnostic), where the grid gives
// the exact results (the nested rule did not stand) and nothing has left
// them out yet. It runs twice: around the Laplace fit before the exact
// results are handed over early (checkMassEarly), so that the page never
// shows a grid's numbers the check would withdraw, and around the
// converged reverse-KL fit after checkELBO, as the Laplace fit may sit
// on a narrow peak away from the mass.
//
// A grid whose spacing is wider than a thin ridge of the density (a
// chaotic cost's posterior over a long window, a sheet of mass between
// its points) misses part of the mass, and its half-resolution error
// estimate need not see it: on the README's Lorenz-63 example the grid's
// log Z was -6.79 with an estimate of 0.78, against -4.531 +- 0.011 by
// 4e7 draws from the prior. The ELBO is a lower bound on log Z, but a
// bound that loose (-6.31) does not clear the grid's estimate.
//
// The test. Each of massBatchCount batches of massDraws draws from q, a
// Student t (massDF degrees of freedom) around the fit's mean with its
// covariance widened massWiden times, gives Zb = mean of p/q, an unbiased
// estimate of the integral of p (a lower one where q misses mass: never
// too high on average). By Markov's inequality P(Zb >= c Z) <= 1/c, so
// where every batch finds more than c = massFactor times the grid's Z,
// the grid's Z is short unless an event of probability at most c^-B has
// happened (3^-6 = 0.14 % for one test, 0.27 % for the two together).
// The draws are seeded: an analysis gives the same verdict every time. A
// proposal that misses the mass only makes the test weaker, never wrong;
// it costs B n evaluations of log p where it fires and n where the first
// batch is not above (the grids it checks hold 10^5 points and more).
func (a *analysis) checkMass(g *fit.Gaussian, around string) {
	if a.ref.quad != nil || !a.avail.resolved() || g == nil {
		return
	}
	threshold := a.ref.logZ + math.Log(massFactor)
	got, ok := massBatches(a.ctx, a.p, g.Mean, g.Cov, a.tr.beat, threshold)
	if !ok || len(got) < massBatchCount {
		return
	}
	a.avail.dropUnresolved()
	a.avail.drop(QuantityModeMass, CodeUnresolved) // the grid's basins split the modes' mass
	a.diag.add(CodeUnresolved, SeverityError,
		"The grid has missed part of the mass: importance sampling around the %s found more than %g times the grid's integral in each of %d independent batches of %d draws (their estimates of log Z from %.4g up, against the grid's %.4g, whose error estimate is %.2g), which would happen with a probability below %.2g %% were the grid right. The density has structure finer than the grid's spacing (a thin ridge, as a chaotic cost's over a long window), so log Z, the exact moments and the fits' comparisons with them are not reported.",
		around, massFactor, massBatchCount, massDraws, slices.Min(got), a.ref.logZ, a.ref.logZErr, 100*massChecks*math.Pow(massFactor, -massBatchCount))
}

// checkMassFitted runs checkMass around the reverse-KL fit where it
// converged (an iterate that stopped short may be anywhere).
func (a *analysis) checkMassFitted(rev *fit.VariationalFit) {
	if rev != nil && rev.Converged {
		a.checkMass(&rev.Gaussian, "reverse-KL fit")
	}
}

// checkMassEarly runs checkMass around the Laplace fit at the highest
// mode, before the exact results are handed over (see checkMass). The
// fits stage makes the fit again and reports it; a mode where it fails
// leaves the test to the reverse-KL fit.
func (a *analysis) checkMassEarly() {
	if a.ref.quad != nil || len(a.modes.fitModes) == 0 {
		return
	}
	lf, err := fit.Laplace(a.modes.fitModes[0])
	if err != nil {
		return
	}
	a.checkMass(&lf.Gaussian, "Laplace fit")
}

// massBatches returns the log of each batch's estimate of the integral of
// p, by importance sampling from a Student t around mean with the
// covariance cov widened (see checkMass), stopping after the first batch
// whose log estimate is not above floor (checkMass needs every batch above
// it; -Inf runs them all); ok is false where cov is not positive definite,
// no draw has a finite weight, or ctx is done. beat, when set, is called
// after each batch.
func massBatches(ctx context.Context, p target.Density, mean []float64, cov mat.Symmetric, beat func(), floor float64) ([]float64, bool) {
	d := p.Dim()
	c := make([]float64, d*d)
	for i := 0; i < d; i++ {
		for j := 0; j < d; j++ {
			c[i*d+j] = massWiden * massWiden * cov.At(i, j)
		}
	}
	l := make([]float64, d*d)
	if !dense.Cholesky(l, c, d, 0) {
		return nil, false
	}
	logNorm := special.Lgamma((massDF+float64(d))/2) - special.Lgamma(massDF/2) - float64(d)/2*math.Log(massDF*math.Pi) - dense.CholLogDet(l, d)/2
	rng := rand.New(rand.NewPCG(massSeed, uint64(d)))
	cols := make([][]float64, d)
	for k := range cols {
		cols[k] = make([]float64, massDraws)
	}
	logQ := make([]float64, massDraws)
	logP := make([]float64, massDraws)
	z := make([]float64, d)
	var out []float64
	for b := 0; b < massBatchCount; b++ {
		if ctx.Err() != nil {
			return nil, false
		}
		for i := 0; i < massDraws; i++ {
			// x = mean + sqrt(nu / chi2) L z: a t with nu degrees of
			// freedom and scale matrix L Lᵀ.
			chi2 := 0.0
			for k := 0; k < massDF; k++ {
				g := rng.NormFloat64()
				chi2 += g * g
			}
			r := math.Sqrt(massDF / chi2)
			m2 := 0.0
			for k := range z {
				z[k] = rng.NormFloat64()
				m2 += z[k] * z[k]
			}
			m2 *= r * r
			for k := 0; k < d; k++ {
				x := mean[k]
				for j := 0; j <= k; j++ {
					x += r * l[k*d+j] * z[j]
				}
				cols[k][i] = x
			}
			logQ[i] = logNorm - (massDF+float64(d))/2*math.Log1p(m2/massDF)
		}
		p.LogDensityBlock(cols, logP)
		if beat != nil {
			beat()
		}
		// log Zb = log mean exp(log p - log q); a point where log p is
		// NaN (a coordinate rounded onto a bound) counts as no mass, which
		// can only lower Zb.
		for i := range logP {
			if logP[i] -= logQ[i]; math.IsNaN(logP[i]) {
				logP[i] = math.Inf(-1)
			}
		}
		logZb := special.LogSumExp(logP) - math.Log(massDraws)
		if math.IsInf(logZb, 0) || math.IsNaN(logZb) {
			return nil, false
		}
		out = append(out, logZb)
		if !(logZb > floor) {
			break
		}
	}
	return out, true
}

// The importance-sampling check's settings (checkMass): 6 batches of 4,000
// draws (24,000 evaluations of log p; the grids it checks hold 10^5 and
// more), from a t with 8 degrees of freedom at 1.5 times the fit's sds,
// each batch above 3 times the grid's Z. On the README's Lorenz-63
// example batches of 2,000 from such a t gave log Z from -5.51 to -5.05
// (the truth -4.53: each batch's log is low, as the weights are heavy
// tailed), above the grid's -6.79 by at least 1.28 against the log 3 =
// 1.10 needed.
const (
	massBatchCount        = 6
	massDraws             = 4000
	massDF                = 8
	massWiden             = 1.5
	massFactor            = 3.0
	massChecks            = 2 // checkMassEarly's and the one after the reverse-KL fit
	massSeed       uint64 = 0x6d617373
)
