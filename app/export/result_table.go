package export

import (
	"fmt"
	"math"
	"strconv"

	"bellcheck/engine"
)

// ResultTable returns the comparison of a result as a table: a column for
// the exact density and one per approximation (engine.Result.Approximations:
// the fit methods, then the candidate Gaussians, headed "NAME (yours)"),
// rows of the moments, intervals and correlations by parameter, then the
// evidence and the comparison numbers. The command line's --markdown and
// --latex print it; numbers have 5 significant digits.
func ResultTable(r *engine.Result) Table {
	apps := r.Approximations()
	t := Table{Columns: []string{"exact"}}
	for _, ap := range apps {
		label := ap.Label
		if ap.Candidate {
			label += " (yours)"
		}
		t.Columns = append(t.Columns, label)
	}
	row := func(label string, exact string, f func(*engine.Fit) string) Row {
		rw := Row{Label: label, Cells: []Cell{{Text: exact}}}
		for _, ap := range apps {
			text := "–"
			if ap.Fit != nil {
				text = f(ap.Fit)
			}
			rw.Cells = append(rw.Cells, Cell{Text: text})
		}
		return rw
	}
	for i, p := range r.Params {
		g := Group{Title: p}
		g.Rows = append(g.Rows,
			row("mean", at(r.Exact.Mean, i), func(f *engine.Fit) string { return at(f.Mean, i) }),
			row("sd", at(r.Exact.SD, i), func(f *engine.Fit) string { return at(f.SD, i) }),
			row("95% interval", quantileInterval(r, i), func(f *engine.Fit) string {
				if i >= len(f.Interval95) {
					return "–"
				}
				return "[" + short(f.Interval95[i][0]) + ", " + short(f.Interval95[i][1]) + "]"
			}),
			row("mean error (sd)", "", func(f *engine.Fit) string { return at(f.MeanErrSD, i) }),
			row("sd ratio", "", func(f *engine.Fit) string { return at(f.SDRatio, i) }),
		)
		t.Groups = append(t.Groups, g)
	}
	if len(r.Params) > 1 {
		g := Group{Title: "correlations"}
		for i := range r.Params {
			for j := i + 1; j < len(r.Params); j++ {
				g.Rows = append(g.Rows, row("corr "+r.Params[i]+", "+r.Params[j], at2(r.Exact.Corr, i, j),
					func(f *engine.Fit) string { return at2(f.Corr, i, j) }))
			}
		}
		t.Groups = append(t.Groups, g)
	}
	t.Groups = append(t.Groups, Group{Title: "against the exact density", Rows: []Row{
		row("log-evidence", short(r.Exact.LogZ), func(f *engine.Fit) string {
			switch {
			case f.LogZ != nil:
				return short(*f.LogZ)
			case f.ELBO != nil:
				return short(*f.ELBO) + " (ELBO)"
			}
			return "–"
		}),
		row("KL(q||p)", "", func(f *engine.Fit) string { return short(f.KLqp) }),
		row("KL(p||q)", "", func(f *engine.Fit) string { return short(f.KLpq) }),
		row("Hellinger", "", func(f *engine.Fit) string { return short(f.Hellinger) }),
		row("95% coverage", "", func(f *engine.Fit) string { return Percent(f.Coverage95) }),
	}})
	return t
}

// CurvatureTable returns the two curvatures side by side (r.Curvature):
// a group for -Hessian at the mode (what the Laplace fit inverts) and one
// for -E_q[Hessian] at the reverse-KL optimum, each a matrix with a row
// and a column per parameter (on the fitting scale), and the sentence
// saying what their difference means as the note. ok is false when the
// result (nil or not) has no curvature comparison.
func CurvatureTable(r *engine.Result) (t Table, ok bool) {
	if r == nil || r.Curvature == nil {
		return Table{}, false
	}
	c := r.Curvature
	t = Table{Corner: "curvature", Columns: append([]string(nil), r.Params...), Note: c.Summary}
	for _, m := range []struct {
		title string
		rows  [][]float64
	}{
		{"−Hessian at the mode (Laplace)", c.AtMode},
		{"−E_q[Hessian] at the reverse-KL optimum", c.Averaged},
	} {
		g := Group{Title: m.title}
		for i, p := range r.Params {
			rw := Row{Label: p}
			for j := range r.Params {
				rw.Cells = append(rw.Cells, Cell{Text: at2(m.rows, i, j)})
			}
			g.Rows = append(g.Rows, rw)
		}
		t.Groups = append(t.Groups, g)
	}
	t.Groups = append(t.Groups, Group{Title: "ratio averaged / at the mode", Rows: []Row{
		{Label: "smallest", Cells: []Cell{{Text: short(c.RatioMin)}}},
		{Label: "largest", Cells: []Cell{{Text: short(c.RatioMax)}}},
	}})
	return t, true
}

// Percent formats a share (a probability) as a percentage to one decimal,
// as the page shows shares; n/a for NaN. A fit's coverage is computed to
// about 2.5e-4 (a fit equal to a Gaussian posterior reads 0.94975 against
// 0.95), so further digits would be noise.
func Percent(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return short(v)
	}
	return strconv.FormatFloat(math.Round(v*1000)/10, 'f', 1, 64) + " %"
}

// short prints a number with 5 significant digits; n/a for NaN.
func short(v float64) string {
	switch {
	case math.IsNaN(v):
		return "n/a"
	case math.IsInf(v, 1):
		return "inf"
	case math.IsInf(v, -1):
		return "-inf"
	}
	return strconv.FormatFloat(v, 'g', 5, 64)
}

func at(v []float64, i int) string {
	if i >= len(v) {
		return "–"
	}
	return short(v[i])
}

func at2(v [][]float64, i, j int) string {
	if i >= len(v) || j >= len(v[i]) {
		return "–"
	}
	return short(v[i][j])
}

func quantileInterval(r *engine.Result, i int) string {
	if i >= len(r.Exact.Quantiles) {
		return "–"
	}
	q := r.Exact.Quantiles[i]
	return fmt.Sprintf("[%s, %s]", short(q[0]), short(q[2]))
}
