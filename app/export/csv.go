package export

import (
	"bytes"
	"encoding/csv"
	"math"
	"strconv"

	"bellcheck/engine"
)

// CSVHeader names the CSV's columns:
//
//   - quantity: what the row holds (see the list in CSV's doc);
//   - param, param2: the parameter(s) it is about, empty for global rows
//     (param2 only for pairs: cov, corr);
//   - method: exact, laplace, reverse_kl, mean_field, forward_kl, grid, or
//     candidate:NAME for a candidate Gaussian of the user's own;
//   - value: the number as Go's strconv writes it ('g', shortest exact
//     form), "inf" or "-inf" for infinities, and empty where the quantity
//     does not exist (the diagnostics say why; the JSON has null there);
//   - error: the grid's error estimate of an exact value, empty otherwise;
//   - scale: "original" for values on the parameter's own scale, or the
//     fitting scale ("log", "logit"; "log/identity" for a pair) for a fit's
//     moments (the JSON's fitting_scale fields) and the grid, which live
//     on that scale.
var CSVHeader = []string{"quantity", "param", "param2", "method", "value", "error", "scale"}

// CSV writes the result as one row per quantity and method, in the columns
// of CSVHeader. The quantities, with the same meaning as the JSON's fields:
//
//	per parameter, exact:  mean, sd, q025, median, q975, mode, grid_mode,
//	                       skewness, excess_kurtosis
//	per parameter, fits:   mean, sd, interval95_lo, interval95_hi,
//	                       mean_err_sd, sd_ratio
//	per pair:              cov, corr (exact and each fit)
//	global, exact:         log_z
//	global, fits:          log_z (laplace), elbo (reverse-KL fits),
//	                       evidence_err, kl_q_p, kl_p_q, hellinger,
//	                       coverage95, iterations, converged (1 or 0),
//	                       residual
//	per pair i <= j, fits: precision (the curvature a Laplace or reverse-KL
//	                       fit inverts, on the fitting scale)
//	grid:                  points, lo, hi (per parameter), edge_mass,
//	                       non_finite
//
// A fit that does not exist has no rows. Candidates have the fits' rows
// (no evidence), under the method candidate:NAME.
func CSV(r *engine.Result) ([]byte, error) {
	if r == nil {
		return nil, ErrNoResult
	}
	var b bytes.Buffer
	w := csv.NewWriter(&b)
	cw := &csvRows{w: w, r: r}
	cw.row(CSVHeader...)
	cw.exact()
	for _, ap := range r.Approximations() {
		if ap.Fit == nil {
			continue
		}
		key := ap.Key
		if ap.Candidate {
			key = CandidatePrefix + ap.Key
		}
		cw.fit(key, ap.Fit)
	}
	cw.grid()
	w.Flush()
	if cw.err != nil {
		return nil, cw.err
	}
	if err := w.Error(); err != nil {
		return nil, err
	}
	return b.Bytes(), nil
}

type csvRows struct {
	w   *csv.Writer
	r   *engine.Result
	err error
}

func (c *csvRows) row(cols ...string) {
	if c.err == nil {
		c.err = c.w.Write(cols)
	}
}

// FormatCSVNumber writes v as the CSV does: the shortest form that parses
// back to the same float64, "inf" or "-inf", and "" for NaN.
func FormatCSVNumber(v float64) string {
	switch {
	case math.IsNaN(v):
		return ""
	case math.IsInf(v, 1):
		return "inf"
	case math.IsInf(v, -1):
		return "-inf"
	}
	return strconv.FormatFloat(v, 'g', -1, 64)
}

func (c *csvRows) num(quantity, param, param2, method string, v, errEst float64, scale string) {
	e := ""
	if !math.IsNaN(errEst) {
		e = FormatCSVNumber(errEst)
	}
	c.row(quantity, param, param2, method, FormatCSVNumber(v), e, scale)
}

func (c *csvRows) name(i int) string {
	if i < len(c.r.Params) {
		return c.r.Params[i]
	}
	return "x" + strconv.Itoa(i+1)
}

// scale returns the fitting scale of parameter i as the scale column
// writes it: "original" when the parameter is fitted as it is.
func (c *csvRows) scale(i int) string {
	if i < len(c.r.Scales) && !c.r.Scales[i].IsIdentity() {
		return c.r.Scales[i].String()
	}
	return "original"
}

func (c *csvRows) pairScale(i, j int) string {
	si, sj := c.scale(i), c.scale(j)
	if si == "original" && sj == "original" {
		return "original"
	}
	id := func(s string) string {
		if s == "original" {
			return string(engine.Identity)
		}
		return s
	}
	return id(si) + "/" + id(sj)
}

func get(v []float64, i int) float64 {
	if i < len(v) {
		return v[i]
	}
	return math.NaN()
}

func get2(v [][]float64, i, j int) float64 {
	if i < len(v) && j < len(v[i]) {
		return v[i][j]
	}
	return math.NaN()
}

func (c *csvRows) exact() {
	ex := c.r.Exact
	nan := math.NaN()
	for i := range c.r.Params {
		p := c.name(i)
		c.num("mean", p, "", "exact", get(ex.Mean, i), get(ex.MeanErr, i), "original")
		sdErr := nan
		if sd := get(ex.SD, i); sd > 0 {
			sdErr = get2(ex.CovErr, i, i) / (2 * sd) // d sd = d var / (2 sd)
		}
		c.num("sd", p, "", "exact", get(ex.SD, i), sdErr, "original")
		q := [3]float64{nan, nan, nan}
		if i < len(ex.Quantiles) {
			q = ex.Quantiles[i]
		}
		c.num("q025", p, "", "exact", q[0], nan, "original")
		c.num("median", p, "", "exact", q[1], nan, "original")
		c.num("q975", p, "", "exact", q[2], nan, "original")
		c.num("mode", p, "", "exact", get(ex.Mode, i), nan, "original")
		c.num("grid_mode", p, "", "exact", get(ex.GridMode, i), nan, "original")
		c.num("skewness", p, "", "exact", get(ex.Skewness, i), nan, "original")
		c.num("excess_kurtosis", p, "", "exact", get(ex.ExcessKurtosis, i), nan, "original")
	}
	for i := range c.r.Params {
		for j := i + 1; j < len(c.r.Params); j++ {
			c.num("cov", c.name(i), c.name(j), "exact", get2(ex.Cov, i, j), get2(ex.CovErr, i, j), "original")
			c.num("corr", c.name(i), c.name(j), "exact", get2(ex.Corr, i, j), nan, "original")
		}
	}
	c.num("log_z", "", "", "exact", ex.LogZ, ex.LogZErr, "original")
}

func (c *csvRows) fit(key string, f *engine.Fit) {
	nan := math.NaN()
	for i := range c.r.Params {
		p, sc := c.name(i), c.scale(i)
		fs := &f.FittingScale
		c.num("mean", p, "", key, get(fs.Mean, i), nan, sc)
		c.num("sd", p, "", key, get(fs.SD, i), nan, sc)
		lo, hi := nan, nan
		if i < len(f.Interval95) {
			lo, hi = f.Interval95[i][0], f.Interval95[i][1]
		}
		c.num("interval95_lo", p, "", key, lo, nan, "original")
		c.num("interval95_hi", p, "", key, hi, nan, "original")
		c.num("mean_err_sd", p, "", key, get(fs.MeanErrSD, i), nan, sc)
		c.num("sd_ratio", p, "", key, get(fs.SDRatio, i), nan, sc)
	}
	for i := range c.r.Params {
		for j := i + 1; j < len(c.r.Params); j++ {
			sc := c.pairScale(i, j)
			c.num("cov", c.name(i), c.name(j), key, get2(f.FittingScale.Cov, i, j), nan, sc)
			c.num("corr", c.name(i), c.name(j), key, get2(f.FittingScale.Corr, i, j), nan, sc)
		}
	}
	opt := func(q string, v *float64) {
		if v != nil {
			c.num(q, "", "", key, *v, nan, "original")
		}
	}
	opt("log_z", f.LogZ)
	opt("elbo", f.ELBO)
	opt("evidence_err", f.EvidenceErr)
	c.num("kl_q_p", "", "", key, f.KLqp, nan, "original")
	c.num("kl_p_q", "", "", key, f.KLpq, nan, "original")
	c.num("hellinger", "", "", key, f.Hellinger, nan, "original")
	c.num("coverage95", "", "", key, f.Coverage95, nan, "original")
	c.num("iterations", "", "", key, float64(f.Iterations), nan, "original")
	conv := 0.0
	if f.Converged {
		conv = 1
	}
	c.num("converged", "", "", key, conv, nan, "original")
	c.num("residual", "", "", key, f.Residual, nan, "original")
	for i := range f.Precision {
		for j := i; j < len(f.Precision[i]); j++ {
			c.num("precision", c.name(i), c.name(j), key, f.Precision[i][j], nan, c.pairScale(i, j))
		}
	}
}

// CandidatePrefix starts the CSV's method column for a candidate Gaussian:
// "candidate:" then its name.
const CandidatePrefix = "candidate:"

func (c *csvRows) grid() {
	g := c.r.Grid
	nan := math.NaN()
	for i := range c.r.Params {
		p, sc := c.name(i), c.scale(i)
		pts := nan
		if i < len(g.Points) {
			pts = float64(g.Points[i])
		}
		c.num("points", p, "", "grid", pts, nan, "original")
		c.num("lo", p, "", "grid", get(g.FittingScale.Lo, i), nan, sc)
		c.num("hi", p, "", "grid", get(g.FittingScale.Hi, i), nan, sc)
	}
	c.num("edge_mass", "", "", "grid", g.EdgeMass, nan, "original")
	c.num("non_finite", "", "", "grid", g.NonFinite, nan, "original")
}
