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

// absentFit is the reason shown where a fit does not exist.
const absentFit = "no fit: see the diagnostics"

// markBest sets Best on the fits with the lowest finite score (ties within
// a part in 10^9 share it). Nothing is marked when fewer than two fits have
// a score, since a comparison needs two.
func markBest(row *Row, score [plot.NumMethods]float64) {
	best := math.Inf(1)
	n := 0
	for _, m := range plot.Fits {
		if v := score[m]; !math.IsNaN(v) && !math.IsInf(v, 0) {
			n++
			best = math.Min(best, v)
		}
	}
	if n < 2 {
		return
	}
	for _, m := range plot.Fits {
		if v := score[m]; !math.IsNaN(v) && v <= best+1e-9*math.Max(1, math.Abs(best)) {
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
		sMean, sSD, sIv := nanScores(), nanScores(), nanScores()
		for _, meth := range plot.Fits {
			f := fitOf(r, meth)
			if f == nil {
				for _, row := range []*Row{&mean, &sd, &iv} {
					row.Cells[meth] = Cell{Text: "—", Absent: absentFit}
				}
				continue
			}
			fm, fs := at(f.Mean, i), at(f.SD, i)
			dm := (fm - exMean) / exSD
			ratio := fs / exSD
			mean.Cells[meth] = Cell{Text: fmtScaled(fm, exSD)}
			if finite(dm) {
				mean.Cells[meth].Sub = fmtSigned(dm, 2) + " sd"
			}
			sd.Cells[meth] = Cell{Text: fmtNum(fs)}
			if finite(ratio) {
				sd.Cells[meth].Sub = "×" + plot.FormatNumber(ratio, 3)
			}
			sMean[meth] = math.Abs(dm)
			sSD[meth] = math.Abs(math.Log(ratio))
			if i < len(f.Interval95) {
				a, b := f.Interval95[i][0], f.Interval95[i][1]
				iv.Cells[meth] = Cell{Text: interval(a, b, exSD)}
				sIv[meth] = math.Max(math.Abs(a-q[0]), math.Abs(b-q[2])) / exSD
			}
		}
		markBest(&mean, sMean)
		markBest(&sd, sSD)
		markBest(&iv, sIv)
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
				row.Cells[plot.Exact] = Cell{Text: plot.FormatNumber(ex, 3)}
				transformed := !scaleOf(i).IsIdentity() || !scaleOf(j).IsIdentity()
				if transformed {
					row.Hint += " Fits on a log or logit scale show their correlation on that scale, so it is not compared with the exact one."
				}
				score := nanScores()
				for _, meth := range plot.Fits {
					f := fitOf(r, meth)
					if f == nil {
						row.Cells[meth] = Cell{Text: "—", Absent: absentFit}
						continue
					}
					c := at2(f.Corr, i, j)
					if transformed {
						c = at2(f.FittingScale.Corr, i, j)
					}
					row.Cells[meth] = Cell{Text: plot.FormatNumber(c, 3)}
					if transformed {
						row.Cells[meth].Sub = "fit scale"
					} else {
						score[meth] = math.Abs(c - ex)
					}
				}
				markBest(&row, score)
				sec.Rows = append(sec.Rows, row)
			}
		}
		sections = append(sections, sec)
	}

	ev := Section{Title: "evidence and divergence"}
	logz := Row{Label: "log-evidence", Hint: "log Z: the grid's value with its error estimate, the Laplace estimate, and the ELBO of the reverse-KL fits (a lower bound on log Z); below each, its difference from the grid's value."}
	logz.Cells[plot.Exact] = Cell{Text: fmtNum(r.Exact.LogZ), Sub: fmtErr(r.Exact.LogZErr)}
	sEv := nanScores()
	for _, meth := range plot.Fits {
		f := fitOf(r, meth)
		switch {
		case f == nil:
			logz.Cells[meth] = Cell{Text: "—", Absent: absentFit}
		case f.LogZ != nil:
			logz.Cells[meth] = evidenceCell(*f.LogZ, f.EvidenceErr)
		case f.ELBO != nil:
			logz.Cells[meth] = evidenceCell(*f.ELBO, f.EvidenceErr)
			logz.Cells[meth].Text = "≥ " + logz.Cells[meth].Text
		default:
			logz.Cells[meth] = Cell{Text: "—", Absent: "this fit gives no evidence estimate"}
		}
		if f != nil && f.EvidenceErr != nil {
			sEv[meth] = math.Abs(*f.EvidenceErr)
		}
	}
	markBest(&logz, sEv)
	ev.Rows = append(ev.Rows, logz)

	metric := func(label, hint string, get func(*engine.Fit) float64, show func(float64) string, score func(float64) float64) {
		row := Row{Label: label, Hint: hint}
		row.Cells[plot.Exact] = Cell{Text: "", Absent: "reference"}
		s := nanScores()
		for _, meth := range plot.Fits {
			f := fitOf(r, meth)
			if f == nil {
				row.Cells[meth] = Cell{Text: "—", Absent: absentFit}
				continue
			}
			v := get(f)
			if math.IsInf(v, 1) {
				row.Cells[meth] = Cell{Text: "∞", Absent: "infinite: the fit puts mass where the exact density has none, or misses mass it has"}
				s[meth] = math.Inf(1)
				continue
			}
			row.Cells[meth] = Cell{Text: show(v)}
			s[meth] = score(v)
		}
		markBest(&row, s)
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
	for _, meth := range plot.Fits {
		f := fitOf(r, meth)
		switch {
		case f == nil:
			run.Cells[meth] = Cell{Text: "—", Absent: absentFit}
		case meth == plot.ForwardKL:
			run.Cells[meth] = Cell{Text: "—", Absent: "moment matching needs no optimiser"}
		case f.Converged:
			run.Cells[meth] = Cell{Text: "converged", Sub: strconv.Itoa(f.Iterations) + " steps"}
		default:
			run.Cells[meth] = Cell{Text: "not converged", Sub: strconv.Itoa(f.Iterations) + " steps, residual " + plot.FormatNumber(f.Residual, 2)}
		}
	}
	ev.Rows = append(ev.Rows, run)
	sections = append(sections, ev)
	return sections
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
