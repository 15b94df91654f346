package engine

import (
	"fmt"
	"math"
)

// gridDiagnostics reports on the box, the tails, the shape of the marginals
// and the grid's error.
func (a *analysis) gridDiagnostics() {
	if !a.ref.onNodes() {
		for _, n := range a.ref.boxNotes.list {
			a.diag.add(n.Code, n.Severity, "%s", n.Message)
		}
	}
	sides := [2]string{"lower", "upper"}
	for k := 0; k < a.d; k++ {
		var stuck []int // the sides where mass stays however far the box widens
		for side := 0; side < 2; side++ {
			e := a.ref.edgeMass[k][side]
			switch {
			case a.ref.onNodes() && !a.pinned[k][side]:
				// The exact results, the comparisons and the plots come
				// from the nested rule, which follows the tails; the grid
				// only scouted, and its box's edges decide nothing.
			case a.ref.quad != nil && a.ref.box.Capped[k][side] && e > 1e-10:
				// The exact results come from the nested rule, whose tail
				// verdicts stand; only what is made on the grid is cut.
				a.diag.add(CodeEdgeMass, SeverityWarning,
					"The grid's box was widened at the %s end of %s as far as it still resolves the density's centre, and %s of the mass remains in its outermost layer: the tails are heavy. The exact results come from the nested rule, which follows them; the comparisons, made on the grid, are those of the truncated box.",
					sides[side], a.names[k], share(e))
			case a.ref.box.Capped[k][side] && e > improperEdgeMass:
				stuck = append(stuck, side)
			case a.ref.box.Capped[k][side] && e > 1e-10:
				a.diag.add(CodeEdgeMass, SeverityWarning,
					"The box was widened at the %s end of %s as far as the grid still resolves the density's centre, and %s of the mass remains in its outermost layer: the tails are heavy, and the exact results are those of the truncated box.",
					sides[side], a.names[k], share(e))
			case a.pinned[k][side] && !a.onSupportBound(k, side) && e > edgeMassWarn:
				a.diag.add(CodeEdgeMass, SeverityWarning,
					"The box side you set at the %s end of %s cuts off mass: %s of it lies in the outermost layer of the grid there.",
					sides[side], a.names[k], share(e))
			case !a.ref.box.Fixed[k][side] && e > edgeMassWarn:
				a.diag.add(CodeEdgeMass, SeverityWarning,
					"A share %s of the mass lies in the outermost layer of the grid at the %s end of %s: the box may cut off part of the density.",
					share(e), sides[side], a.names[k])
			}
		}
		// What follows the edges' figures, with the usual cause.
		const verdict = "the density may be improper (not integrable) or too heavy-tailed for a grid, and the exact results are those of the truncated box. A parameter with no prior, along which the likelihood does not vanish, is the usual cause: give %s a proper prior."
		switch len(stuck) {
		case 1:
			a.diag.add(CodeImproper, SeverityError,
				"Mass stays at the %s edge of %s however far the box is widened (%s in its outermost layer): "+verdict,
				sides[stuck[0]], a.names[k], share(a.ref.edgeMass[k][stuck[0]]), a.names[k])
		case 2:
			a.diag.add(CodeImproper, SeverityError,
				"Mass stays at both edges of %s however far the box is widened (%s and %s in the outermost layers): "+verdict,
				a.names[k], share(a.ref.edgeMass[k][0]), share(a.ref.edgeMass[k][1]), a.names[k])
		}
	}
	f := &a.ref.fitting
	var heavy []string
	for k := 0; k < a.d; k++ {
		if a.avail.presentAt(QuantityAxisErrors, k) && f.TailShare[k] > tailShareWarn {
			heavy = append(heavy, a.names[k])
		}
	}
	if len(heavy) > 0 {
		a.diag.add(CodeHeavyTails, SeverityWarning,
			"The tails of %s are heavy: the mean or variance still moves as the box widens, so the exact moments and the forward-KL fit are uncertain.", list(heavy))
	}
	if a.ref.nonFinite > 0 && !a.ref.onNodes() {
		// Where the rule stands it has checked that log p is defined next
		// to the mass (quadrature.Result.NonFiniteNearMass); the grid's
		// undefined points lie where the rule does not reach (a bound of
		// the support the grid's box touches).
		a.diag.add(CodeNonFinite, SeverityWarning,
			"The log-density is NaN or +inf at %s of the grid points; they were left out of every result.%s", percentPoints(a.ref.nonFinite), a.undefinedHint())
	}
	for k := 0; k < a.d; k++ {
		if !a.avail.presentAt(QuantityAxisErrors, k) {
			continue
		}
		scale := ""
		if sc := a.maps[k].Scale; !sc.IsIdentity() {
			scale = " on its " + sc.String() + " scale"
		}
		if s := f.Skewness[k]; math.Abs(s) > skewWarn {
			a.diag.add(CodeSkewed, SeverityWarning,
				"The marginal of %s%s is skewed (skewness %.2f): a Gaussian misplaces its mass.", a.names[k], scale, s)
		}
		if kt := f.ExcessKurtosis[k]; math.Abs(kt) > kurtWarn && f.KurtosisTailShare[k] <= tailShareAbsent {
			what := "heavier"
			if kt < 0 {
				what = "lighter"
			}
			a.diag.add(CodeTailsKurtosis, SeverityWarning,
				"The marginal of %s%s has %s tails than a Gaussian (excess kurtosis %.2f).", a.names[k], scale, what, kt)
		}
	}
	o := &a.ref.original
	var bad []string
	switch {
	case math.IsInf(a.ref.logZErr, 1):
		// The half-resolution grid found no mass (fuzz corpus
		// 5edb867aae134b32): the change has no size to print.
		bad = append(bad, "log Z beyond measure (the half-resolution grid misses the mass)")
	case a.ref.logZErr > logZErrWarn:
		bad = append(bad, fmt.Sprintf("log Z by about %.2g", a.ref.logZErr))
	}
	for k := 0; k < a.d; k++ {
		if sd, e := o.SD[k], o.MeanErr[k]; !a.avail.presentAt(QuantityAxisErrors, k) || !(sd > 0) || math.IsInf(sd, 0) || math.IsNaN(e) || math.IsInf(e, 0) {
			// No variance, or moments that overflowed on the original
			// scale (reported by dropOverflow).
			continue
		}
		if sd := o.SD[k]; o.MeanErr[k] > meanErrWarn*sd {
			bad = append(bad, fmt.Sprintf("the mean of %s by %.2g sd", a.names[k], o.MeanErr[k]/sd))
		}
		if v, e := o.Cov[k][k], o.CovErr[k][k]; !math.IsInf(v, 0) && !math.IsInf(e, 0) && !math.IsNaN(e) && e > varErrWarn*v {
			bad = append(bad, fmt.Sprintf("the variance of %s by %s", a.names[k], percent(o.CovErr[k][k]/v)))
		}
	}
	switch {
	case len(bad) == 0 || !a.avail.resolved():
	case a.ref.onNodes():
		// The estimates are the nested rule's (its steps h, 2h and 4h),
		// not the grid's: more grid points would change nothing.
		a.diag.add(CodeGridError, SeverityWarning,
			"The exact results are less precise than usual: by the nested rule's error estimate (from its steps h, 2h and 4h) they may be off in %s.", list(bad))
	default:
		a.diag.add(CodeGridError, SeverityWarning,
			"The grid may be too coarse: at half resolution it changes %s; give the parameters more points.", list(bad))
	}
}

// percentPoints formats a share of the grid's points for a sentence.
func percentPoints(x float64) string {
	if x >= 1e-4 {
		return fmt.Sprintf("%.2g %%", 100*x)
	}
	return fmt.Sprintf("a share %.1g", x)
}

// pointString writes a point on the fitting scale as its coordinates on
// the original scale, named.
func (a *analysis) pointString(z []float64) string {
	s := ""
	for k, v := range z {
		if k > 0 {
			s += ", "
		}
		s += fmt.Sprintf("%s = %.4g", a.names[k], a.maps[k].ToOriginal(v))
	}
	return s
}

// onSupportBound reports whether a side of the box lies on a bound of the
// parameter's support (a box the user set to the whole support, say): the
// density ends there, so mass next to it is cut off by nothing.
func (a *analysis) onSupportBound(k, side int) bool {
	if side == 0 {
		return a.bounds.Lo[k] == a.modeLo[k]
	}
	return a.bounds.Hi[k] == a.modeHi[k]
}
