package examples

import "bellcheck/engine"

// Example is one gallery scenario.
type Example struct {
	// ID is a short stable name (used in links and tests).
	ID string
	// Title names the scenario; Shows says in one line what it shows.
	Title, Shows string
	// Source is the model text.
	Source string
	// Params holds suggested options by parameter name (for instance the
	// log scale for a positive parameter, where the reverse-KL fit exists).
	Params map[string]engine.ParamOptions
}

var logScale = engine.ParamOptions{Scale: engine.Log}

// Default is the ID of the example the page opens with.
const Default = "dose"

// All lists the gallery in display order. The data are invented for the
// demonstration.
var All = []Example{
	{
		ID:    "dose",
		Title: "Dose-response",
		Shows: "Two logistic coefficients from five dose groups: a skewed, correlated posterior the fits tilt differently.",
		Source: `# Share of responders in five dose groups (invented data).
# The response probability is logistic in log dose.
dose = [0.5, 1, 2, 4, 8]
n    = [12, 12, 12, 12, 12]
k    = [1, 3, 6, 9, 11]
param a          # log-odds at dose 1
param b          # change in log-odds per unit of log dose
p = logistic(a + b * log(dose))
sum(ld_binomial(k, n, p)) + ld_normal(a, 0, 3) + ld_normal(b, 0, 3)
`,
	},
	{
		ID:    "square",
		Title: "Seen through its square",
		Shows: "A state observed only through its square with noise: two equal modes, so one Gaussian cannot be right.",
		Source: `# A state x is measured only through x^2, with noise of sd 0.6.
y = [2.1, 1.7, 2.6, 2.2, 1.9]
param x
ld_normal(x, 0, 3) + sum(ld_normal(y, x^2, 0.6))
`,
	},
	{
		ID:    "decay",
		Title: "Decay rate from counts",
		Shows: "A positive rate from few detector counts with a gamma prior: a skewed posterior, better fitted on the log scale.",
		Source: `# Counts in eight 10-second windows of a weak source (invented).
counts = [3, 1, 4, 2, 0, 2, 5, 1]
window = 10                  # seconds
param rate in [0, inf]       # decays per second
ld_gamma(rate, 2, 4) + sum(ld_poisson(counts, rate * window))
`,
		Params: map[string]engine.ParamOptions{"rate": logScale},
	},
	{
		ID:    "banana",
		Title: "Banana",
		Shows: "The twisted-Gaussian test target of Haario, Saksman and Tamminen (1999): a curved ridge no ellipse follows.",
		Source: `# Twisted Gaussian: a normal with sd 10 and 1, bent by b = 0.05.
param u
param v
b = 0.05
ld_normal(u, 0, 10) + ld_normal(v + b * u^2 - 100 * b, 0, 1)
`,
	},
	{
		ID:    "sensor",
		Title: "Sensor calibration",
		Shows: "Offset, gain and noise scale of a sensor read against eight reference inputs: three parameters, one skewed.",
		Source: `# A sensor read against eight reference inputs (invented data).
ref     = [0, 1, 2, 3, 4, 5, 6, 7]
reading = [0.18, 1.52, 2.41, 3.70, 4.55, 5.83, 6.71, 7.96]
param offset
param gain
param noise in [0, inf]
(sum(ld_normal(reading, offset + gain * ref, noise))
    + ld_normal(offset, 0, 1) + ld_normal(gain, 1, 0.5) + ld_lognormal(noise, log(0.15), 0.3))
`,
		Params: map[string]engine.ParamOptions{"noise": logScale},
	},
	{
		ID:    "outlier",
		Title: "Location with an outlier",
		Shows: "A location and scale under a Student-t likelihood with one stray reading: heavy tails and a skewed scale.",
		Source: `# Seven readings of one quantity; the last is a stray (invented).
x = [9.8, 10.3, 10.1, 9.6, 10.4, 10.0, 17.2]
param loc
param scale in [0, inf]
sum(ld_student(x, 3, loc, scale)) + ld_normal(loc, 10, 10) + ld_exponential(scale, 1)
`,
		Params: map[string]engine.ParamOptions{"scale": logScale},
	},
	{
		ID:    "funnel",
		Title: "Hierarchical funnel",
		Shows: "A group effect whose spread is itself uncertain: a funnel narrowing as the log-scale falls.",
		Source: `# One group effect theta with spread exp(logsd), seen once with sd 1.
param logsd
param theta
ld_normal(logsd, 0, 1.5) + ld_normal(theta, 0, exp(logsd)) + ld_normal(0.8, theta, 1)
`,
	},
	{
		ID:    "clock",
		Title: "Clock drift",
		Shows: "Offset, rate, ageing and noise of a clock against a reference: four parameters; the uncertain noise gives the others heavier tails than any Gaussian.",
		Source: `# A clock's error against a reference over ten days (invented, in ms);
# t counts days from the middle of the run.
t   = [-4.5, -3.5, -2.5, -1.5, -0.5, 0.5, 1.5, 2.5, 3.5, 4.5]
err = [2.1, 2.4, 2.8, 3.3, 3.5, 3.9, 3.9, 4.2, 4.3, 4.4]
param offset
param rate
param ageing
param noise in [0, inf]
# The ageing term is centred (mean of t^2 is 8.25) so that it does not
# trade off against the offset; the datasheet puts the noise near 0.15 ms.
fit = offset + rate * t + ageing * (t^2 - 8.25)
(sum(ld_normal(err, fit, noise)) + ld_normal(offset, 3, 5) + ld_normal(rate, 0, 1)
    + ld_normal(ageing, 0, 0.1) + ld_lognormal(noise, log(0.15), 0.3))
`,
		Params: map[string]engine.ParamOptions{"noise": logScale},
	},
	{
		ID:    "separation",
		Title: "Near separation",
		Shows: "A dose-response where the top doses all respond: EP, matching moments one dose group at a time, is visibly wider than the variational Gaussian and nearer the exact spread.",
		Source: `# Six dose groups of six subjects; every subject responds at the two
# highest doses (invented data).
dose = [0.5, 1, 2, 4, 8, 16]
n    = [6, 6, 6, 6, 6, 6]
k    = [0, 0, 1, 4, 6, 6]
param a          # log-odds at dose 1
param b          # change in log-odds per unit of log dose
sum(ld_binomial(k, n, logistic(a + b * log(dose)))) + ld_normal(a, 0, 10) + ld_normal(b, 0, 10)
`,
	},
}

// ByID returns the example with the given ID.
func ByID(id string) (Example, bool) {
	for _, e := range All {
		if e.ID == id {
			return e, true
		}
	}
	return Example{}, false
}
