package ui

import (
	"math"

	"bellcheck/app/export"
	"bellcheck/app/plot"
)

// fmtNum formats a number with 4 significant digits ("—" for NaN).
func fmtNum(v float64) string { return plot.FormatNumber(v, 4) }

// fmtCorr formats a correlation coefficient with three significant digits,
// and one below 5e-4 in size as 0.000: a value such as 4e-17, the rounding
// of a correlation that is zero by symmetry, drew the eye with its
// exponent, and none that small tells a reader anything about the fit.
func fmtCorr(v float64) string {
	if math.Abs(v) < 5e-4 {
		return "0.000"
	}
	return plot.FormatNumber(v, 3)
}

// fmtScaled formats v with enough digits to show it to about a hundredth of
// scale (a standard deviation, say): 1000.1234 with scale 0.01 keeps its
// decimals, 0.51234 with scale 2 needs only two.
func fmtScaled(v, scale float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) || v == 0 || !(scale > 0) || math.IsInf(scale, 0) {
		return fmtNum(v)
	}
	sig := int(math.Floor(math.Log10(math.Abs(v)))-math.Floor(math.Log10(scale))) + 3
	return plot.FormatNumber(v, max(2, min(sig, 12)))
}

// fmtPercent formats a share as a percentage with one decimal, as the
// text tables do (export.Percent); a dash for NaN.
func fmtPercent(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return plot.FormatNumber(v, 3)
	}
	return export.Percent(v)
}

// fmtErr formats an error estimate as "±1.2e−5" (empty when not finite).
func fmtErr(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return ""
	}
	return "±" + plot.FormatNumber(math.Abs(v), 2)
}

// fmtSigned formats v with an explicit sign.
func fmtSigned(v float64, sig int) string {
	s := plot.FormatNumber(v, sig)
	if v > 0 {
		return "+" + s
	}
	return s
}
