package engine

// Result is the outcome of one analysis. Its JSON form is the contract shared
// by the command line (bellcheck fit --json), the page's export and the
// page's JavaScript API. Non-finite numbers marshal as null.
type Result struct {
	Params []string `json:"params"`
	// Form is "log_density" or "cost": how the model gave its density.
	Form string `json:"form"`
	// Scales gives each parameter's fitting scale: "identity", "log" or
	// "logit". Every number of the Result is on the original scale, except
	// those under the fields named fitting_scale (and a fit's precision
	// and a mode's log density, which are the fitting scale's).
	Scales []Scale `json:"scales"`
	Exact  Exact   `json:"exact"`
	Fits   Fits    `json:"fits"`
	// Candidates are the user's Gaussians (Options.Candidates), scored
	// like the fits; omitted when there are none (candidate.go).
	Candidates Candidates `json:"candidates,omitempty"`
	// Curvature sets the two curvatures side by side: -Hessian at the mode
	// (Laplace) and -E_q[Hessian] at the reverse-KL optimum, with a
	// sentence on what their difference means; nil unless both fits
	// exist (curvature.go).
	Curvature *Curvature `json:"curvature,omitempty"`
	// Live lists the constants marked to vary (Options.Vary), with their
	// values in this analysis and their ranges, for sliders (live.go).
	Live        []LiveConstant `json:"live,omitempty"`
	Modes       []Mode         `json:"modes"`
	Diagnostics []Diagnostic   `json:"diagnostics"`
	Grid        GridInfo       `json:"grid"`
	Timing      Timing         `json:"timing_ms"`
	// Plots holds curves and images for drawing; omitted from the command
	// line's JSON unless asked for.
	Plots *Plots `json:"plots,omitempty"`
	// FitsToCome marks the exact result that AnalyseEarly hands over
	// before the fits: Fits, Candidates and Curvature are empty, and the
	// whole result follows.
	FitsToCome bool `json:"fits_to_come,omitempty"`
}

// Exact is the reference posterior from quadrature on the grid.
type Exact struct {
	LogZ    float64     `json:"log_z"`
	LogZErr float64     `json:"log_z_err"` // estimated absolute error of LogZ
	Mean    []float64   `json:"mean"`
	MeanErr []float64   `json:"mean_err"` // estimated absolute error of each mean
	Cov     [][]float64 `json:"cov"`
	CovErr  [][]float64 `json:"cov_err"`
	SD      []float64   `json:"sd"`
	Corr    [][]float64 `json:"corr"`
	// Mode is the highest mode, polished by Newton; GridMode the best grid point.
	Mode     []float64 `json:"mode"`
	GridMode []float64 `json:"grid_mode"`
	// Quantiles holds, per parameter, the 2.5 %, 50 % and 97.5 % quantiles
	// of its marginal.
	Quantiles      [][3]float64 `json:"quantiles"`
	Skewness       []float64    `json:"skewness"`
	ExcessKurtosis []float64    `json:"excess_kurtosis"`
	// Rule reports that these results come from the nested rule around
	// the modes (on each parameter's unconstrained scale); false where the
	// grid is the reference. With the rule, a grid that did not only scout
	// (Grid.Scouted false) was evaluated in full for the marginals whose
	// quantiles and plots the rule's walks do not resolve.
	Rule bool `json:"rule,omitempty"`
}

// Fits holds the Gaussian approximations, indexed by Method; a nil fit
// does not exist, and a diagnostic says why. Its JSON is an object with a
// member per method, named by its Key, in the order of Methods.
type Fits [NumMethods]*Fit

// Fit is one Gaussian approximation, a normal on the fitting scale of each
// parameter, with its comparison against the exact density. Its moments
// are those of the distribution it implies on the original scale (the
// pushforward of the normal through each parameter's map); the normal
// itself is FittingScale. Where every parameter is fitted as it is, the
// two agree.
type Fit struct {
	// Mean, Cov, SD and Corr are the fit's moments on the original scale
	// (transform.Map.Pushforward and transform.Covariance).
	Mean []float64   `json:"mean"`
	Cov  [][]float64 `json:"cov"`
	SD   []float64   `json:"sd"`
	Corr [][]float64 `json:"corr"`
	// Interval95 is each parameter's central 95 % interval under the fit,
	// on the original scale (the normal's interval mapped through x(z)).
	Interval95 [][2]float64 `json:"interval95"`
	// FittingScale is the normal itself, on the fitting scale.
	FittingScale FitNormal `json:"fitting_scale"`
	// Precision is the curvature the fit uses, on the fitting scale:
	// -Hessian at the mode for the Laplace fit, -E_q[Hessian] at the
	// optimum for the reverse-KL fits.
	Precision [][]float64 `json:"precision,omitempty"`
	// LogZ is the Laplace or the EP evidence estimate (those fits only).
	LogZ *float64 `json:"log_z,omitempty"`
	// ELBO is the evidence lower bound (reverse-KL fits only).
	ELBO *float64 `json:"elbo,omitempty"`
	// Factors is the number of factors EP approximated by sites, and
	// ExactFactors the number of Gaussian factors it kept exact (EP only).
	Factors      *int `json:"factors,omitempty"`
	ExactFactors *int `json:"exact_factors,omitempty"`
	// EvidenceErr is LogZ or ELBO minus the grid's log Z.
	EvidenceErr *float64 `json:"evidence_err,omitempty"`

	KLqp      float64 `json:"kl_q_p"` // KL(q||p) on the grid; +Inf marshals as null
	KLpq      float64 `json:"kl_p_q"` // KL(p||q) on the grid
	Hellinger float64 `json:"hellinger"`
	// MeanErrSD is (fit mean - exact mean) / exact sd, per parameter, on
	// the original scale.
	MeanErrSD []float64 `json:"mean_err_sd"`
	// SDRatio is fit sd / exact sd, per parameter, on the original scale.
	SDRatio []float64 `json:"sd_ratio"`
	// Coverage95 is the exact mass inside the fit's central 95 % region.
	Coverage95 float64 `json:"coverage95"`

	// Iterations, Converged and Residual describe the optimiser's run
	// (reverse-KL fits and the Laplace mode's Newton polish).
	Iterations int     `json:"iterations"`
	Converged  bool    `json:"converged"`
	Residual   float64 `json:"residual"`
}

// FitNormal is a fit's normal on the fitting scale, with its mean and
// spread errors against the exact moments on that scale.
type FitNormal struct {
	Mean []float64   `json:"mean"`
	Cov  [][]float64 `json:"cov"`
	SD   []float64   `json:"sd"`
	Corr [][]float64 `json:"corr"`
	// MeanErrSD is (fit mean - exact mean) / exact sd on the fitting scale.
	MeanErrSD []float64 `json:"mean_err_sd"`
	// SDRatio is fit sd / exact sd on the fitting scale.
	SDRatio []float64 `json:"sd_ratio"`
}

// Mode is one local maximum of the density on the fitting scale, found by
// the mode search.
type Mode struct {
	// X is the mode's point on the original scale, x(z).
	X []float64 `json:"x"`
	// LogDensity is the log-density on the fitting scale at the mode (with
	// the log-Jacobian of the map).
	LogDensity float64 `json:"log_density"`
	// FittingScale holds the mode's point z on the fitting scale.
	FittingScale FittingPoint `json:"fitting_scale"`
	// Cost is the model's cost J = -log p at the mode, on the original
	// scale (without the log-Jacobian of the fitting scale), for a model
	// given as a cost; nil for a log-density model.
	Cost *float64 `json:"cost,omitempty"`
	// Mass is the approximate share of the total mass near this mode; NaN
	// (null in JSON) where the reference missed part of the mass
	// (QuantityModeMass absent).
	Mass float64 `json:"mass"`
	// PositiveDefinite reports whether -Hessian is positive definite there.
	PositiveDefinite bool `json:"positive_definite"`
	OnBound          bool `json:"on_bound"`
}

// Severity of a diagnostic.
const (
	SeverityInfo    = "info"
	SeverityWarning = "warning"
	SeverityError   = "error"
)

// Diagnostic is a stable code and one plain sentence.
type Diagnostic struct {
	Code     string `json:"code"`
	Severity string `json:"severity"`
	Message  string `json:"message"`
}

// FittingPoint is a point on the fitting scale.
type FittingPoint struct {
	X []float64 `json:"x"`
}

// GridInfo describes the quadrature grid.
type GridInfo struct {
	// Lo and Hi are the grid's box on the original scale, x(z) of its
	// sides.
	Lo []float64 `json:"lo"`
	Hi []float64 `json:"hi"`
	// FittingScale is the box on the fitting scale, where the grid is
	// regular.
	FittingScale FittingBox `json:"fitting_scale"`
	Points       []int      `json:"points"`
	// EdgeMass is the largest share of mass in any face's outermost layer.
	EdgeMass float64 `json:"edge_mass"`
	// NonFinite is the fraction of grid points where log p is NaN or +Inf.
	NonFinite float64 `json:"non_finite"`
	// Scouted reports a grid that only scouted (its box, and its peaks for
	// the mode search): the exact results, the comparisons and the plots
	// come from the nested rule around the modes, not from this grid.
	Scouted bool `json:"scouted,omitempty"`
}

// FittingBox is a box on the fitting scale.
type FittingBox struct {
	Lo []float64 `json:"lo"`
	Hi []float64 `json:"hi"`
}

// Timing reports milliseconds spent, in total and per stage.
type Timing struct {
	Total  float64            `json:"total"`
	Stages map[string]float64 `json:"stages,omitempty"`
}

// Plots holds what the page draws, all on the original scale.
type Plots struct {
	// Marginals holds one entry per parameter.
	Marginals []Marginal1D `json:"marginals"`
	// Pairs holds one entry per pair i < j, in the order (0,1), (0,2), ...
	Pairs []Marginal2D `json:"pairs"`
	// PairsToCome marks the early result of AnalyseEarly: Pairs is empty
	// and the pair marginals follow in the whole result.
	PairsToCome bool `json:"pairs_to_come,omitempty"`
}

// Marginal1D is a parameter's exact marginal density on a grid, with each
// fit's marginal density at the same points.
type Marginal1D struct {
	Param int       `json:"param"`
	X     []float64 `json:"x"`
	Exact []float64 `json:"exact"`
	// Fits holds each fit's marginal density by method, nil where the fit
	// is absent; in the JSON each is a member named by the method's Key.
	Fits [NumMethods][]float64 `json:"-"`
	// Candidates holds each candidate's marginal density at the same
	// points, in the order of Result.Candidates.
	Candidates [][]float64 `json:"candidates,omitempty"`
}

// Marginal2D is the exact pairwise marginal density of parameters I and J on
// an NX by NY grid (Density[iy*NX+ix]), with the density levels whose
// superlevel sets enclose 39 %, 86 % and 99 % of its mass, and each fit's
// matching contours (the same masses) as closed polylines.
type Marginal2D struct {
	I       int        `json:"i"`
	J       int        `json:"j"`
	X       []float64  `json:"x"`
	Y       []float64  `json:"y"`
	Density []float64  `json:"density"`
	Levels  [3]float64 `json:"levels"`
	// Ellipses[m][level] is a polyline of points [x, y] for each fit m
	// that exists.
	Ellipses Ellipses `json:"ellipses"`
	// CandidateEllipses holds each candidate's contours (the same masses),
	// in the order of Result.Candidates.
	CandidateEllipses [][3][][2]float64 `json:"candidate_ellipses,omitempty"`
}

// Ellipses holds each fit's contours of a pair's marginal by method. Its
// JSON is an object with a member per fit that exists, named by the
// method's Key, in the order of the keys.
type Ellipses map[Method][3][][2]float64
