package engine

import (
	"math"
	"slices"

	"bellcheck/engine/fit"
)

// settleExact is the stage that settles which numbers of the exact
// posterior exist: log Z where the density looks proper, the moments that
// settle as the box widens, those that do not overflow on the original
// scale; and it polishes the mode on the original scale (a.mode). It
// writes each absence to the availability record with its diagnostic.
func (a *analysis) settleExact() {
	r := a.ref
	o := &r.original
	d := a.d
	if r.tailMass > 1 {
		// More mass seems to lie beyond the box than in it: the density is
		// taken to be improper, and log Z does not exist.
		a.avail.drop(QuantityLogZ, CodeImproper)
		a.diag.add(CodeImproper, SeverityError,
			"The mass beyond the box, extrapolated from its faces, exceeds the mass inside: the density looks improper, so log Z, the evidence errors and the moments that do not settle are not reported.")
	}
	for k := 0; k < d; k++ {
		if r.improper(k) {
			// Mass stays at a face however far it is widened (the improper
			// diagnostic of gridDiagnostics says where): no log Z either.
			a.avail.drop(QuantityLogZ, CodeImproper)
		}
	}
	gridMode := make([]float64, d)
	for k, z := range r.exactMode {
		gridMode[k] = a.maps[k].ToOriginal(z)
	}
	a.mode = a.originalMode(gridMode)
	a.dropOverflow()
	if !a.avail.resolved() && r.quad == nil {
		return
	}

	// Quantities that do not exist are absent.
	var noVar, noMean, noKurt, noSkew []string
	for k := 0; k < d; k++ {
		// With the nested rule's results its tail verdicts (in TailShare)
		// stand; the axis errors may be out for the grid's sake only.
		axisGone := !a.avail.presentAt(QuantityAxisErrors, k) && r.quad == nil
		varGone := r.improper(k) || o.TailShare[k] > tailShareAbsent || axisGone
		meanGone := o.AbsTailShare[k] > absShareAbsent || r.improper(k)
		if r.improper(k) {
			// Nor do the moments and quantiles of a marginal that is not
			// integrable: absent for that reason, which the improper
			// diagnostic gives (a warning per moment would repeat it).
			for _, q := range []Quantity{QuantityQuantiles, QuantityMean, QuantityVariance, QuantitySkewness, QuantityKurtosis} {
				a.avail.dropAt(q, k, CodeImproper)
			}
			continue
		}
		if varGone {
			noVar = append(noVar, a.names[k])
			for _, q := range []Quantity{QuantityVariance, QuantitySkewness, QuantityKurtosis} {
				a.avail.dropAt(q, k, CodeNoVariance)
			}
		}
		if meanGone {
			noMean = append(noMean, a.names[k])
			a.avail.dropAt(QuantityMean, k, CodeNoMean)
		}
		if !varGone && o.KurtosisTailShare[k] > tailShareAbsent {
			noKurt = append(noKurt, a.names[k])
			a.avail.dropAt(QuantityKurtosis, k, CodeHeavyTails)
			if r.quad != nil && math.IsNaN(o.Skewness[k]) {
				// The rule found the third moment unsettled too.
				noSkew = append(noSkew, a.names[k])
				a.avail.dropAt(QuantitySkewness, k, CodeHeavyTails)
			}
		}
	}
	// The rule decides from the tails' decay; the grid from the moments'
	// change as the box widens: each says so in its words.
	byRule := r.quad != nil
	a.absentMoments(CodeNoVariance, noVar, byRule,
		"The variance of %s is infinite: the density's tail falls too slowly for it (as a Student t's with 2 or fewer degrees of freedom; the rule's walks on the unconstrained scale end where the tail's share of x^2 does not decay): the exact covariance and the forward-KL fit are not reported.",
		"The variance of %s does not settle as the box widens (it may not exist, as for a Cauchy density): the exact covariance and the forward-KL fit are not reported.")
	a.absentMoments(CodeHeavyTails, noKurt, byRule,
		"The fourth moment of %s is infinite: the tails fall too slowly for it (as a Student t's with 4 or fewer degrees of freedom): the excess kurtosis is not reported.",
		"The fourth moment of %s does not settle as the box widens (the tails may be too heavy for it to exist): the excess kurtosis is not reported.")
	if len(noSkew) > 0 {
		a.diag.add(CodeHeavyTails, SeverityWarning,
			"The third moment of %s does not settle either: the skewness is not reported.", list(noSkew))
	}
	a.absentMoments(CodeNoMean, noMean, byRule,
		"Nor does the mean of %s exist: the tails fall too slowly for it (as a Cauchy density's): the exact mean is not reported.",
		"The mean of %s does not settle as the box widens either (it may not exist): the exact mean is not reported.")
}

// absentMoments adds the warning for the parameters named, whose moment
// does not exist: in the words of the nested rule's verdict when byRule,
// else of the grid's.
func (a *analysis) absentMoments(code string, names []string, byRule bool, ruleMsg, gridMsg string) {
	if len(names) == 0 {
		return
	}
	msg := gridMsg
	if byRule {
		msg = ruleMsg
	}
	a.diag.add(code, SeverityWarning, msg, list(names))
}

// dropOverflow records as absent, with a diagnostic, the exact moments and
// quantiles that came out of the grid's sums as NaN or infinite: on the
// original scale of a log- or logit-scaled parameter x = e^z overflows
// where the box reaches z > 709, and a variance underflows to zero (or to a
// subnormal number, with no precision left) where it reaches z < -354. A
// correlation is left out where it came out non-finite. A covariance left
// out makes its row and column bad for the parameters after it, as in the
// Result.
func (a *analysis) dropOverflow() {
	o := &a.ref.original
	d := a.d
	bad := func(v float64) bool { return math.IsNaN(v) || math.IsInf(v, 0) }
	// The nested rule leaves NaN where it finds a moment infinite (its tail
	// verdicts, in the tail shares) and where a moment is already recorded
	// absent: those are not overflows.
	quad := a.ref.quad != nil
	varOut := func(k int) bool {
		return quad && (math.IsInf(o.TailShare[k], 1) || !a.avail.presentAt(QuantityVariance, k))
	}
	// A variance must be a positive normal double: a continuous density
	// has spread, so zero or a subnormal value is an underflow (a variance
	// the rule left out is not).
	badVar := func(k int, v float64) bool { return bad(v) || (!varOut(k) && !(v >= 0x1p-1022)) }
	badCorr := func(k, l int) bool { return !varOut(k) && !varOut(l) && bad(o.Corr[k][l]) }
	cov := copyRows(o.Cov)
	mean, skew, kurt := slices.Clone(o.Mean), slices.Clone(o.Skewness), slices.Clone(o.ExcessKurtosis)
	// shapeOut: the kurtosis is absent for a reason of its own (an
	// infinite variance or fourth moment), so Pearson's bound below does
	// not apply to it.
	shapeOut := make([]bool, d)
	for k := 0; k < d; k++ {
		if quad && math.IsInf(o.AbsTailShare[k], 1) {
			mean[k] = 0 // left out by settleExact (no_mean)
		}
		if varOut(k) {
			shapeOut[k] = true
			skew[k], kurt[k] = 0, 0
			for l := 0; l < d; l++ {
				cov[k][l], cov[l][k] = 0, 0
			}
		}
		if quad && math.IsInf(o.KurtosisTailShare[k], 1) {
			shapeOut[k] = true
			kurt[k] = 0
			if math.IsNaN(skew[k]) {
				skew[k] = 0 // the rule's third moment does not settle: left out by settleExact
			}
		}
	}
	// Pearson's inequality: for any distribution the excess kurtosis is at
	// least the squared skewness less 2 (Pearson 1916; from memory). A pair
	// below it came from sums that cancelled (the higher moments of a
	// posterior far narrower than its distance from zero on the original
	// scale) and carries no digits.
	shapeLost := func(k int) bool {
		return !shapeOut[k] && !math.IsNaN(kurt[k]) && !math.IsNaN(skew[k]) && kurt[k] < skew[k]*skew[k]-2-1e-9
	}
	var names, lost []string
	for k := 0; k < d; k++ {
		if a.ref.improper(k) {
			continue // absent as not integrable (settleExact), not as overflowed
		}
		if shapeLost(k) {
			lost = append(lost, a.names[k])
			a.avail.dropAt(QuantitySkewness, k, CodeOverflow)
			a.avail.dropAt(QuantityKurtosis, k, CodeOverflow)
		}
		over := bad(mean[k]) || badVar(k, cov[k][k]) || bad(skew[k]) || bad(kurt[k])
		if a.avail.presentAt(QuantityQuantiles, k) {
			// Quantiles left out already (NaN) have their own reason.
			for _, q := range o.Quantiles[k] {
				over = over || bad(q)
			}
		}
		for l := 0; l < d; l++ {
			over = over || bad(cov[k][l]) || badCorr(k, l)
		}
		if !over {
			continue
		}
		names = append(names, a.names[k])
		if bad(mean[k]) {
			a.avail.dropAt(QuantityMean, k, CodeOverflow)
		}
		if a.avail.presentAt(QuantityQuantiles, k) && slices.ContainsFunc(o.Quantiles[k][:], bad) {
			a.avail.dropAt(QuantityQuantiles, k, CodeOverflow)
		}
		if badVar(k, cov[k][k]) || bad(skew[k]) || bad(kurt[k]) {
			a.avail.dropAt(QuantitySkewness, k, CodeOverflow)
			a.avail.dropAt(QuantityKurtosis, k, CodeOverflow)
		}
		for l := 0; l < d; l++ {
			if bad(cov[k][l]) || badVar(k, cov[k][k]) || badCorr(k, l) {
				a.avail.dropPair(QuantityCovariance, k, l, CodeOverflow)
				cov[k][l], cov[l][k] = math.NaN(), math.NaN()
			}
		}
		if badVar(k, cov[k][k]) {
			a.avail.dropAt(QuantityVariance, k, CodeOverflow)
		}
	}
	if math.IsInf(a.ref.logZ, 0) && a.avail.present(QuantityLogZ) {
		a.avail.drop(QuantityLogZ, CodeOverflow)
		names = append(names, "log Z")
	}
	if len(lost) > 0 {
		a.diag.add(CodeOverflow, SeverityWarning,
			"The skewness and kurtosis of %s were lost to rounding (their sums cancelled: an excess kurtosis below the squared skewness less 2 is impossible), so they are not reported.", list(lost))
	}
	if len(names) > 0 {
		a.diag.add(CodeOverflow, SeverityWarning,
			"The exact moments of %s overflow or underflow double precision on the original scale (the box reaches values too large to square or sum, or so small that a variance rounds to zero), so those that did are not reported.", list(names))
	}
}

// originalMode polishes the highest mode on the original scale; NaN, with
// the reason recorded, where there is none.
func (a *analysis) originalMode(gridMode []float64) []float64 {
	d := a.d
	transformed := false
	for _, m := range a.maps {
		if !m.Scale.IsIdentity() {
			transformed = true
		}
	}
	if !transformed {
		if len(a.modes.modes) > 0 {
			return slices.Clone(a.modes.modes[0].X)
		}
		a.avail.drop(QuantityMode, CodeNoMode)
		return nanSlice(d)
	}
	starts := [][]float64{gridMode}
	if len(a.modes.modes) > 0 {
		starts = append(starts, slices.Clone(a.modes.modes[0].X))
	}
	lo, hi := make([]float64, d), make([]float64, d)
	for k, prm := range a.m.Params {
		lo[k], hi[k] = prm.Lo, prm.Hi
	}
	ms, err := fit.FindModes(a.ctx, &watched{Density: a.ev, tick: a.pw.tick}, starts, lo, hi)
	if err != nil || len(ms) == 0 {
		a.avail.drop(QuantityMode, CodeModeNotPolished)
		a.diag.add(CodeModeNotPolished, SeverityInfo,
			"The mode search on the original scale failed, so the exact mode is not reported (the grid's best point is).")
		return nanSlice(d)
	}
	return slices.Clone(ms[0].X)
}
