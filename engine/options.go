package engine

import (
	"bellcheck/engine/model"
	"bellcheck/engine/transform"
)

// Scale is the scale on which a parameter is fitted: transform.Scale, the
// one type the options, the Result and the page share.
type Scale = transform.Scale

// Scales a parameter may be fitted on.
const (
	// Identity fits the parameter as it is (the default of a parameter
	// with no bound).
	Identity = transform.Identity
	// Log fits log(x - lo); the support must be [lo, inf].
	Log = transform.Log
	// Logit fits log((x - lo) / (hi - x)); the support must be [lo, hi].
	Logit = transform.Logit
)

// ParamOptions are per-parameter settings. Zero values mean the defaults.
type ParamOptions struct {
	// Scale is the fitting scale; "" means the default (ScaleOf).
	Scale Scale `json:"scale,omitempty"`
	// Points is the number of grid points along this parameter; 0 means the
	// default for the model's dimension. At most MaxAxisPoints(d) for d
	// parameters (Analyse returns ErrOptions beyond), which keeps the
	// largest analyses within memory.
	Points int `json:"points,omitempty"`
	// Lo and Hi, when non-nil, override the box the grid covers (within the
	// model's support); otherwise the box is found automatically.
	Lo *float64 `json:"lo,omitempty"`
	Hi *float64 `json:"hi,omitempty"`
}

// Options are the settings of one analysis. The zero value is the default.
type Options struct {
	// Params holds per-parameter options, by index; it may be shorter than
	// the number of parameters.
	Params []ParamOptions `json:"params,omitempty"`
	// Plots asks for Result.Plots to be filled.
	Plots bool `json:"plots,omitempty"`
	// Candidates are Gaussians of the user's own, scored against the
	// exact density like the fits (Result.Candidates; candidate.go).
	Candidates []Candidate `json:"candidates,omitempty"`
	// Vary marks scalar constants of the model that the page may move
	// with a slider, each with its range (Result.Live; live.go).
	Vary []Vary `json:"vary,omitempty"`
}

// Progress reports how far an analysis has come.
type Progress struct {
	Stage    string  // e.g. "grid", "modes", "laplace", "reverse_kl", "compare"
	Fraction float64 // of the whole analysis, 0 to 1
}

// ProgressFunc receives progress reports. Analyse calls it often (at least
// every few milliseconds of work), so a caller in the browser may use it to
// yield to the event loop (for instance by sleeping briefly).
type ProgressFunc func(Progress)

// ScaleOf returns the scale parameter i of m is fitted on under opts: the
// one its options name, else its default. A bounded parameter's default is
// its unconstrained scale (log for a support [lo, inf], logit for [lo,
// hi]): there every fit exists and EP's tilted distributions are not cut
// off at a bound. Two kinds of model fit every parameter with no scale
// named as it is: a cost (J = -log p), whose minimiser is the analysis
// its users compare with, and whose mode a log or logit scale would move
// by the Jacobian; and a model with a candidate Gaussian given on the
// original scale, which the fits are compared with on one scale. A
// parameter with no bound is fitted as it is. A named scale is returned as
// named, whether or not it suits the support (CheckOptions says).
func ScaleOf(m *model.Model, opts Options, i int) Scale {
	if i < len(opts.Params) && opts.Params[i].Scale != "" {
		return opts.Params[i].Scale
	}
	if m.Form == model.Cost {
		return Identity
	}
	for _, c := range opts.Candidates {
		if !c.FittingScale {
			return Identity
		}
	}
	p := m.Params[i]
	return transform.Unconstrained(p.Lo, p.Hi)
}
