package engine

// Quantity names a number, or a group of numbers, of the Result that may
// be absent: NaN in the Result, null in its JSON, or a nil fit. A method's
// key (Method.Key) names the fit itself.
type Quantity string

// The quantities that may be absent.
const (
	// QuantityLogZ is the exact log Z and its error estimate, and with it
	// each fit's evidence error.
	QuantityLogZ Quantity = "log_z"
	// QuantityMean is a parameter's exact mean and its error estimate.
	QuantityMean Quantity = "mean"
	// QuantityVariance is a parameter's exact variance: its sd, and its row
	// and column of the covariance, its error estimate and the correlation.
	QuantityVariance Quantity = "variance"
	// QuantityCovariance is one pair's entry of the exact covariance, its
	// error estimate and the correlation.
	QuantityCovariance Quantity = "covariance"
	// QuantitySkewness and QuantityKurtosis are a parameter's exact
	// skewness and excess kurtosis.
	QuantitySkewness Quantity = "skewness"
	QuantityKurtosis Quantity = "kurtosis"
	// QuantityQuantiles are a parameter's exact quantiles.
	QuantityQuantiles Quantity = "quantiles"
	// QuantityMode is the exact mode on the original scale.
	QuantityMode Quantity = "mode"
	// QuantityModeMass is each mode's share of the mass (Mode.Mass):
	// absent where the grid it came from missed part of the mass.
	QuantityModeMass Quantity = "mode_mass"
	// QuantityComparison is every comparison of a fit with the exact
	// posterior (divergences, Hellinger distance, coverage, mean errors and
	// sd ratios): absent when the reference does not resolve the density.
	QuantityComparison Quantity = "comparison"
	// QuantityAxisErrors is, per parameter, each fit's mean error and sd
	// ratio, which need the exact variance on the fitting scale.
	QuantityAxisErrors Quantity = "axis_errors"
	// QuantityKLqp, QuantityKLpq and QuantityHellinger are a fit's
	// divergences and Hellinger distance.
	QuantityKLqp      Quantity = "kl_q_p"
	QuantityKLpq      Quantity = "kl_p_q"
	QuantityHellinger Quantity = "hellinger"
	// QuantityCoverage is a fit's coverage of the exact mass.
	QuantityCoverage Quantity = "coverage"
	// QuantityFitMoments is a fit's mean, sd and covariance row of one
	// parameter on the original scale (entry i is the method, j the
	// parameter): absent where the pushforward falls outside double
	// precision. The fit's normal on the fitting scale is always there.
	QuantityFitMoments Quantity = "fit_moments"
)

// quantity returns the quantity that is the fit itself.
func (m Method) quantity() Quantity { return Quantity(m.Key()) }

// absentReasons lists, for each quantity that may be absent, the
// diagnostic codes that may explain its absence: every absence the
// analysis records carries one of them, and the diagnostic with that code
// is in the Result.
var absentReasons = map[Quantity][]string{
	Laplace.quantity():   {CodeNotPositiveDefinite, CodeModeOnBound, CodeNoMode, CodeFitFailed, CodeUnresolved},
	ReverseKL.quantity(): {CodeInfiniteKL, CodeFitFailed, CodeUnresolved},
	MeanField.quantity(): {CodeInfiniteKL, CodeFitFailed, CodeUnresolved},
	ForwardKL.quantity(): {CodeNoVariance, CodeImproper, CodeFitFailed, CodeUnresolved},
	EP.quantity():        {CodeEPSingleFactor, CodeEPImproperSite, CodeFitFailed, CodeUnresolved},
	QuantityLogZ:         {CodeImproper, CodeUnresolved, CodeOverflow},
	QuantityMean:         {CodeNoMean, CodeImproper, CodeUnresolved, CodeOverflow},
	QuantityVariance:     {CodeNoVariance, CodeImproper, CodeUnresolved, CodeOverflow},
	QuantityCovariance:   {CodeOverflow},
	QuantitySkewness:     {CodeHeavyTails, CodeNoVariance, CodeImproper, CodeUnresolved, CodeOverflow},
	QuantityKurtosis:     {CodeHeavyTails, CodeNoVariance, CodeImproper, CodeUnresolved, CodeOverflow},
	QuantityQuantiles:    {CodeImproper, CodeUnresolved, CodeOverflow},
	QuantityMode:         {CodeModeNotPolished, CodeNoMode},
	QuantityModeMass:     {CodeUnresolved},
	QuantityComparison:   {CodeUnresolved},
	QuantityAxisErrors:   {CodeNoVariance, CodeImproper, CodeUnresolved},
	QuantityKLqp:         {CodeLostPrecision},
	QuantityKLpq:         {CodeLostPrecision},
	QuantityHellinger:    {CodeLostPrecision},
	QuantityCoverage:     {CodeFitOffGrid, CodeUnresolved},
	QuantityFitMoments:   {CodeOverflow},
}

// all stands for every parameter (or every fit) in an availability entry.
const all = -1

// entry is one absence: a quantity as a whole (i = j = all), for one
// parameter or fit (i; j = all), or for one pair of parameters (i, j).
type entry struct {
	q    Quantity
	i, j int
}

// availability is the record of what the Result leaves out and why: each
// stage writes the absences it decides, with the code of the diagnostic
// that says why, and the report reads the record to leave the numbers
// out. The first reason recorded for an entry stands.
type availability struct {
	absent map[entry]string
}

func (av *availability) set(e entry, code string) {
	if av.absent == nil {
		av.absent = map[entry]string{}
	}
	if _, ok := av.absent[e]; !ok {
		av.absent[e] = code
	}
}

// drop records q as absent as a whole.
func (av *availability) drop(q Quantity, code string) { av.set(entry{q, all, all}, code) }

// dropAt records q as absent for parameter (or fit) i.
func (av *availability) dropAt(q Quantity, i int, code string) { av.set(entry{q, i, all}, code) }

// dropPair records q as absent for the pair of parameters (i, j).
func (av *availability) dropPair(q Quantity, i, j int, code string) { av.set(entry{q, i, j}, code) }

// present reports q present as a whole.
func (av *availability) present(q Quantity) bool {
	_, gone := av.absent[entry{q, all, all}]
	return !gone
}

// presentAt reports q present for parameter (or fit) i.
func (av *availability) presentAt(q Quantity, i int) bool {
	_, gone := av.absent[entry{q, i, all}]
	return !gone && av.present(q)
}

// presentPair reports q present for the pair (i, j), in either order.
func (av *availability) presentPair(q Quantity, i, j int) bool {
	_, gone := av.absent[entry{q, i, j}]
	_, gone2 := av.absent[entry{q, j, i}]
	return !gone && !gone2 && av.present(q)
}

// whyAt returns the code that explains q's absence for parameter i ("" if
// present).
func (av *availability) whyAt(q Quantity, i int) string {
	if c, ok := av.absent[entry{q, all, all}]; ok {
		return c
	}
	return av.absent[entry{q, i, all}]
}

// resolved reports that the reference resolves the density: no stage
// found it unresolved, so the exact moments and the comparisons may stand.
func (av *availability) resolved() bool { return av.present(QuantityComparison) }

// dropUnresolved records what a reference that does not resolve the
// density leaves out: log Z, the exact moments and quantiles, and every
// comparison of a fit with them.
func (av *availability) dropUnresolved() {
	for _, q := range []Quantity{QuantityLogZ, QuantityMean, QuantityVariance, QuantitySkewness,
		QuantityKurtosis, QuantityQuantiles, QuantityComparison, QuantityAxisErrors} {
		av.drop(q, CodeUnresolved)
	}
}
