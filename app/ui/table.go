package ui

import (
	"math"
	"strconv"

	"bellcheck/app/plot"
	"bellcheck/engine"
	"bellcheck/engine/model"
)

// Cell is one entry of the results table.
type Cell struct {
	// Text is the value; Sub a smaller second line (an error estimate, or
	// the deviation from the exact value); Absent explains, when the value
	// does not exist, why.
	Text, Sub, Absent string
	// Best marks the fit closest to the exact density in this row.
	Best bool
}

// Row is one line of the results table: a label and a cell per method, in
// plot.Methods order.
type Row struct {
	Label string
	// Param names the parameter(s) the row is about, "" for global rows.
	Param string
	// Hint explains the row in a sentence (a tooltip and screen-reader
	// description).
	Hint  string
	Cells [plot.NumMethods]Cell
	// Cands holds a cell per candidate Gaussian of the user's, in the
	// order of Result.Candidates (candidates.go): scored like the fits,
	// never ranked among them.
	Cands []Cell
}

// Section is a titled group of rows.
type Section struct {
	Title string
	Rows  []Row
}

// fitOf returns a result's fit for a method (nil for the exact density and
// for absent fits).
func fitOf(r *engine.Result, m plot.Method) *engine.Fit {
	if f, ok := m.Fit(); ok {
		return r.Fits[f]
	}
	return nil
}

// absentFit is the reason shown where a fit does not exist, and fitToCome
// where the result is the exact one handed over before the fits
// (engine.Result.FitsToCome).
const (
	absentFit = "no fit: see the diagnostics"
	fitToCome = "being fitted: the exact results came first"
)

// noFit returns the reason a fit of r is missing.
func noFit(r *engine.Result) string {
	if r != nil && r.FitsToCome {
		return fitToCome
	}
	return absentFit
}

// markBest sets Best on the fits with the lowest finite score (ties within
// a part in 10^9 share it). Nothing is marked when fewer than two fits have
// a score, since a comparison needs two.
func markBest(row *Row, score [plot.NumMethods]float64) {
	best := math.Inf(1)
	n := 0
	for _, m := range plot.Fits {
		if v := score[m]; !math.IsNaN(v) && !math.IsInf(v, 0) {
			n++
			best = min(best, v)
		}
	}
	if n < 2 {
		return
	}
	for _, m := range plot.Fits {
		if v := score[m]; !math.IsNaN(v) && v <= best+1e-9*max(1, math.Abs(best)) {
			row.Cells[m].Best = true
		}
	}
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// nanScores returns a score per method, all NaN (none yet).
func nanScores() [plot.NumMethods]float64 {
	var s [plot.NumMethods]float64
	for i := range s {
		s[i] = math.NaN()
	}
	return s
}

func at(v []float64, i int) float64 {
	if i < len(v) {
		return v[i]
	}
	return math.NaN()
}

func at2(v [][]float64, i, j int) float64 {
	if i < len(v) && j < len(v[i]) {
		return v[i][j]
	}
	return math.NaN()
}

// Table builds the results table for a result of model m: per parameter the
// mean, standard deviation and 95 % interval; the correlations; the
// evidence; and the divergences from the exact density, with the best fit
// marked in each row.
func Table(r *engine.Result, m *model.Model) []Section {
	if r == nil {
		return nil
	}
	d := len(r.Params)
	scaleOf := func(i int) engine.Scale {
		if i < len(r.Scales) {
			return r.Scales[i]
		}
		return engine.Identity
	}

	var sections []Section
	for i, name := range r.Params {
		sec := Section{Title: name}
		exMean, exSD := at(r.Exact.Mean, i), at(r.Exact.SD, i)
		var q [3]float64
		if i < len(r.Exact.Quantiles) {
			q = r.Exact.Quantiles[i]
		} else {
			q = [3]float64{math.NaN(), math.NaN(), math.NaN()}
		}
		note := ""
		if sc := scaleOf(i); !sc.IsIdentity() {
			note = " The fits are Gaussian on the " + sc.String() + " scale; their moments here are those of the implied distribution on the original scale."
		}
		mean := Row{Label: "mean", Param: name, Hint: "Posterior mean; under each fit, its difference from the exact mean in exact standard deviations." + note}
		sd := Row{Label: "sd", Param: name, Hint: "Posterior standard deviation; under each fit, its ratio to the exact one." + note}
		iv := Row{Label: "95 % interval", Param: name, Hint: "Central 95 % credible interval: the exact 2.5 % and 97.5 % quantiles, and each fit's central 95 % interval."}
		mean.Cells[plot.Exact] = Cell{Text: fmtScaled(exMean, exSD), Sub: fmtErr(at(r.Exact.MeanErr, i))}
		sdErr := math.NaN()
		if i < len(r.Exact.CovErr) && exSD > 0 {
			sdErr = at2(r.Exact.CovErr, i, i) / (2 * exSD) // d sd = d var / (2 sd)
		}
		sd.Cells[plot.Exact] = Cell{Text: fmtNum(exSD), Sub: fmtErr(sdErr)}
		iv.Cells[plot.Exact] = Cell{Text: interval(q[0], q[2], exSD)}
		for _, c := range []*Cell{&mean.Cells[plot.Exact], &sd.Cells[plot.Exact]} {
			if c.Text == "—" {
				c.Absent = "not reported: see the diagnostics"
			}
		}
		fillRow(&mean, r, func(f *engine.Fit) (Cell, float64) {
			fm := at(f.Mean, i)
			dm := (fm - exMean) / exSD
			c := Cell{Text: fmtScaled(fm, exSD)}
			if finite(dm) {
				c.Sub = fmtSigned(dm, 2) + " sd"
			}
			return c, math.Abs(dm)
		})
		fillRow(&sd, r, func(f *engine.Fit) (Cell, float64) {
			fs := at(f.SD, i)
			ratio := fs / exSD
			c := Cell{Text: fmtNum(fs)}
			if finite(ratio) {
				c.Sub = "×" + plot.FormatNumber(ratio, 3)
			}
			return c, math.Abs(math.Log(ratio))
		})
		fillRow(&iv, r, func(f *engine.Fit) (Cell, float64) {
			if i >= len(f.Interval95) {
				return Cell{}, math.NaN()
			}
			a, b := f.Interval95[i][0], f.Interval95[i][1]
			return Cell{Text: interval(a, b, exSD)}, max(math.Abs(a-q[0]), math.Abs(b-q[2])) / exSD
		})
		sec.Rows = append(sec.Rows, mean, sd, iv)
		sections = append(sections, sec)
	}

	if d > 1 {
		sec := Section{Title: "correlations"}
		for i := range d {
			for j := i + 1; j < d; j++ {
				pair := r.Params[i] + ", " + r.Params[j]
				row := Row{Label: "corr(" + pair + ")", Param: pair, Hint: "Correlation coefficient of the two parameters."}
				ex := at2(r.Exact.Corr, i, j)
				row.Cells[plot.Exact] = Cell{Text: fmtCorr(ex)}
				transformed := !scaleOf(i).IsIdentity() || !scaleOf(j).IsIdentity()
				if transformed {
					row.Hint += " Fits on a log or logit scale show their correlation on that scale, so it is not compared with the exact one."
				}
				fillRow(&row, r, func(f *engine.Fit) (Cell, float64) {
					if transformed {
						return Cell{Text: fmtCorr(at2(f.FittingScale.Corr, i, j)), Sub: "fit scale"}, math.NaN()
					}
					c := at2(f.Corr, i, j)
					return Cell{Text: fmtCorr(c)}, math.Abs(c - ex)
				})
				sec.Rows = append(sec.Rows, row)
			}
		}
		sections = append(sections, sec)
	}

	ev := Section{Title: "evidence and divergence"}
	logz := Row{Label: "log-evidence", Hint: "log Z: the grid's value with its error estimate, the Laplace estimate, and the ELBO of the reverse-KL fits (a lower bound on log Z); below each, its difference from the grid's value."}
	logz.Cells[plot.Exact] = Cell{Text: fmtNum(r.Exact.LogZ), Sub: fmtErr(r.Exact.LogZErr)}
	fillRow(&logz, r, func(f *engine.Fit) (Cell, float64) {
		var c Cell
		switch {
		case f.LogZ != nil:
			c = evidenceCell(*f.LogZ, f.EvidenceErr)
		case f.ELBO != nil:
			c = evidenceCell(*f.ELBO, f.EvidenceErr)
			c.Text = "≥ " + c.Text
		default:
			return Cell{Text: "—", Absent: "this fit gives no evidence estimate"}, math.NaN()
		}
		if f.EvidenceErr != nil {
			return c, math.Abs(*f.EvidenceErr)
		}
		return c, math.NaN()
	})
	for k := range logz.Cands {
		if logz.Cands[k].Text == "—" {
			logz.Cands[k].Absent = "a Gaussian of your own gives no evidence estimate"
		}
	}
	ev.Rows = append(ev.Rows, logz)

	metric := func(label, hint string, get func(*engine.Fit) float64, show func(float64) string, score func(float64) float64) {
		row := Row{Label: label, Hint: hint}
		row.Cells[plot.Exact] = Cell{Text: "", Absent: "reference"}
		fillRow(&row, r, func(f *engine.Fit) (Cell, float64) {
			v := get(f)
			if math.IsInf(v, 1) {
				return Cell{Text: "∞", Absent: "infinite: the fit puts mass where the exact density has none, or misses mass it has"}, math.Inf(1)
			}
			return Cell{Text: show(v)}, score(v)
		})
		ev.Rows = append(ev.Rows, row)
	}
	id := func(v float64) float64 { return v }
	metric("KL(q‖p)", "Reverse Kullback-Leibler divergence of the fit q from the exact density p, on the grid, in nats; the reverse-KL fit minimises it.",
		func(f *engine.Fit) float64 { return f.KLqp }, func(v float64) string { return plot.FormatNumber(v, 3) }, id)
	metric("KL(p‖q)", "Forward Kullback-Leibler divergence of the exact density p from the fit q, on the grid, in nats; moment matching minimises it.",
		func(f *engine.Fit) float64 { return f.KLpq }, func(v float64) string { return plot.FormatNumber(v, 3) }, id)
	metric("Hellinger", "Hellinger distance between fit and exact density, from 0 (equal) to 1 (disjoint).",
		func(f *engine.Fit) float64 { return f.Hellinger }, func(v float64) string { return plot.FormatNumber(v, 3) }, id)
	metric("95 % coverage", "Exact posterior mass inside the fit's central 95 % region; 95 % is right, less means the fit is overconfident.",
		func(f *engine.Fit) float64 { return f.Coverage95 }, fmtPercent, func(v float64) float64 { return math.Abs(v - 0.95) })
	run := Row{Label: "optimiser", Hint: "How the fit's optimiser ended: the Newton polish of the mode (Laplace) or the fixed-point iteration (reverse-KL fits), with its steps and final residual. Moment matching needs no optimiser."}
	run.Cells[plot.Exact] = Cell{Absent: "reference"}
	for _, fm := range engine.Methods {
		meth, f := plot.CurveOf(fm), r.Fits[fm]
		switch {
		case f == nil:
			run.Cells[meth] = Cell{Text: "—", Absent: noFit(r)}
		case !fm.Iterative():
			run.Cells[meth] = Cell{Text: "—", Absent: "moment matching needs no optimiser"}
		case f.Converged:
			run.Cells[meth] = Cell{Text: "converged", Sub: strconv.Itoa(f.Iterations) + " steps"}
		default:
			run.Cells[meth] = Cell{Text: "not converged", Sub: strconv.Itoa(f.Iterations) + " steps, residual " + plot.FormatNumber(f.Residual, 2)}
		}
	}
	run.Cands = make([]Cell, len(r.Candidates))
	for k := range run.Cands {
		run.Cands[k] = Cell{Text: "—", Absent: "a Gaussian of your own: no optimiser ran"}
	}
	ev.Rows = append(ev.Rows, run)
	sections = append(sections, ev)
	return sections
}

// absentCandidate is the reason shown where a candidate was not scored.
const absentCandidate = "not scored: see the diagnostics"

// fillRow fills a row's cells for the fits and the candidates from one
// function of a fit, which returns the cell and the fit's score (lower is
// closer to the exact value; NaN for none), and marks the best fit. A cell
// with no text is shown as absent. Candidates are scored, not ranked.
func fillRow(row *Row, r *engine.Result, cellOf func(f *engine.Fit) (Cell, float64)) {
	score := nanScores()
	for _, meth := range plot.Fits {
		f := fitOf(r, meth)
		if f == nil {
			row.Cells[meth] = Cell{Text: "—", Absent: noFit(r)}
			continue
		}
		row.Cells[meth], score[meth] = cellOf(f)
		if row.Cells[meth].Text == "" {
			row.Cells[meth] = Cell{Text: "—", Absent: "not available for this fit"}
			score[meth] = math.NaN()
		}
	}
	markBest(row, score)
	if len(r.Candidates) == 0 {
		return
	}
	row.Cands = make([]Cell, len(r.Candidates))
	for k, c := range r.Candidates {
		if c.Fit == nil {
			row.Cands[k] = Cell{Text: "—", Absent: absentCandidate}
			continue
		}
		row.Cands[k], _ = cellOf(c.Fit)
		if row.Cands[k].Text == "" {
			row.Cands[k] = Cell{Text: "—", Absent: "not available for this Gaussian"}
		}
	}
}

func evidenceCell(v float64, diff *float64) Cell {
	c := Cell{Text: fmtNum(v)}
	if diff != nil && !math.IsNaN(*diff) {
		c.Sub = fmtSigned(*diff, 2)
	}
	return c
}

func interval(a, b, scale float64) string {
	return "[" + fmtScaled(a, scale) + ", " + fmtScaled(b, scale) + "]"
}
