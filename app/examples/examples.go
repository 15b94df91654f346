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

// lorenzBox has the Lorenz examples' grid cover each parameter's whole
// support at 61 points per axis, and be the exact reference: every point
// integrates the system over the whole window, and the nested rule, around
// the deepest minimum of a chaotic cost, takes more evaluations than this
// grid and cannot resolve its marginals (their walks lose the thin ridges).
var lorenzBox = map[string]engine.ParamOptions{
	"x0": {Points: 61, Lo: ptr(-4), Hi: ptr(12)},
	"y0": {Points: 61, Lo: ptr(-3), Hi: ptr(13)},
	"z0": {Points: 61, Lo: ptr(5), Hi: ptr(21)},
}

func ptr(x float64) *float64 { return &x }

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
		ID:    "oscillator",
		Title: "Damped oscillator",
		Shows: "Frequency and damping of a spring from twenty noisy positions: an ode integrated by Runge-Kutta inside the model.",
		Source: `# A mass on a spring, released from x = 1 at rest, its position read
# every half second with noise of sd 0.1 (invented readings).
t = [0.5, 1, 1.5, 2, 2.5, 3, 3.5, 4, 4.5, 5, 5.5, 6, 6.5, 7, 7.5, 8, 8.5, 9, 9.5, 10]
x_seen = [0.89, 0.23, -0.1, -0.37, -0.65, -0.57, -0.07, 0.07, 0.35, 0.23, 0.35, 0.13, -0.2, -0.1, -0.25, -0.1, -0.12, 0.16, 0.09, 0.15]
param w in [0.2, 4]      # natural frequency, radians per second
param zeta in [0, 1]     # damping ratio
ode t from 0 substeps 4
  x = 1 rate v
  v = 0 rate -w^2*x - 2*zeta*w*v
end
sum(ld_normal(x_seen, x, 0.1)) + ld_lognormal(w, 0, 1) + ld_beta(zeta, 1.5, 4)
`,
		Params: map[string]engine.ParamOptions{"w": {Scale: engine.Logit}, "zeta": {Scale: engine.Logit}},
	},
	{
		ID:    "lorenz-short",
		Title: "Lorenz-63, short window",
		Shows: "The starting state of a chaotic system from two noisy readings of x over half a time unit: a cost with few local minima.",
		Source: `# Lorenz-63 (Lorenz 1963; sigma 10, rho 28, beta 8/3): which starting
# state explains two readings of x over half a time unit? The readings
# are invented: the system started at (5.5, 7, 14), integrated finely,
# read every quarter time unit with noise of sd 3. The background guess
# (4, 5, 13) has sd 4.
t = [0.25, 0.5]
x_seen = [18.1, 2.5]
param x0 in [-4, 12]
param y0 in [-3, 13]
param z0 in [5, 21]
ode t from 0 substeps 5
  x = x0 rate 10*(y - x)
  y = y0 rate x*(28 - z) - y
  z = z0 rate x*y - 8/3*z
end
# Variational data assimilation's cost: background plus misfit.
cost ((x0 - 4)^2 + (y0 - 5)^2 + (z0 - 13)^2)/(2*4^2) + sum((x - x_seen)^2)/(2*3^2)
`,
		Params: lorenzBox,
	},
	{
		ID:    "lorenz-long",
		Title: "Lorenz-63, long window",
		Shows: "The same starting state from ten readings over two and a half time units: the longer window's cost has many more local minima, and five Runge-Kutta substeps per reading no longer follow the equations away from the best fit (the step check warns).",
		Source: `# The same system, background and readings, read on for two and a half
# time units: the longer the window, the more local minima the cost has
# (Pires, Vautard and Talagrand 1996). Over this box it has over twenty
# against the short window's three; the grid's lesser peaks find several.
t = [0.25, 0.5, 0.75, 1, 1.25, 1.5, 1.75, 2, 2.25, 2.5]
x_seen = [18.1, 2.5, -0.1, 7.9, 7.9, 0.6, -12.2, -4, -5.9, -12.9]
param x0 in [-4, 12]
param y0 in [-3, 13]
param z0 in [5, 21]
ode t from 0 substeps 5
  x = x0 rate 10*(y - x)
  y = y0 rate x*(28 - z) - y
  z = z0 rate x*y - 8/3*z
end
# Variational data assimilation's cost: background plus misfit.
cost ((x0 - 4)^2 + (y0 - 5)^2 + (z0 - 13)^2)/(2*4^2) + sum((x - x_seen)^2)/(2*3^2)
`,
		Params: lorenzBox,
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
