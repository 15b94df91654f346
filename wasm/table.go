//go:build !(js && wasm)

package main

import (
	"fmt"
	"io"
	"math"
	"strings"
	"text/tabwriter"

	"bellcheck/app/export"
	"bellcheck/engine"
)

// writeTable prints a readable summary of a result: one row per quantity,
// one column for the exact density and one per fit and candidate Gaussian.
func writeTable(w io.Writer, name string, r *engine.Result) {
	fmt.Fprintf(w, "%s: %d parameter(s) %s, given as %s\n", name, len(r.Params),
		strings.Join(r.Params, ", "), strings.ReplaceAll(r.Form, "_", "-"))
	// The fitting scales, where one is not the identity (a bounded
	// parameter's default is log or logit).
	var scales []string
	for i, sc := range r.Scales {
		if !sc.IsIdentity() && i < len(r.Params) {
			scales = append(scales, r.Params[i]+" on the "+string(sc)+" scale")
		}
	}
	if len(scales) > 0 {
		rest := ""
		if len(scales) < len(r.Params) {
			rest = "; the others as they are"
		}
		fmt.Fprintf(w, "fitted: %s%s\n", strings.Join(scales, ", "), rest)
	}
	// The reference: the nested rule (beside a grid that only scouted, or
	// one evaluated in full for the marginals its walks do not resolve),
	// or the grid.
	ref := "grid of %s points"
	switch {
	case r.Exact.Rule && r.Grid.Scouted:
		ref = "quadrature around the modes (scouting grid %s points)"
	case r.Exact.Rule:
		ref = "quadrature around the modes, with a grid of %s points for the marginals its walks do not resolve"
	}
	fmt.Fprintf(w, "exact: "+ref+"; log Z = %s (error estimate %s)\n\n",
		joinInts(r.Grid.Points, " x "), num(r.Exact.LogZ), num(r.Exact.LogZErr))

	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	header := []string{"", "exact"}
	apps := r.Approximations()
	for _, ap := range apps {
		label := ap.Label
		if ap.Candidate {
			label += " (yours)"
		}
		header = append(header, label)
	}
	row(tw, header...)
	perFit := func(label string, exact string, f func(*engine.Fit) string) {
		cells := []string{label, exact}
		for _, ap := range apps {
			fit := ap.Fit
			if fit == nil {
				cells = append(cells, "-")
				continue
			}
			cells = append(cells, f(fit))
		}
		row(tw, cells...)
	}
	for i, p := range r.Params {
		perFit("mean "+p, at(r.Exact.Mean, i), func(f *engine.Fit) string { return at(f.Mean, i) })
		perFit("sd "+p, at(r.Exact.SD, i), func(f *engine.Fit) string { return at(f.SD, i) })
		exactInterval := "-"
		if i < len(r.Exact.Quantiles) {
			q := r.Exact.Quantiles[i]
			exactInterval = interval(q[0], q[2])
		}
		perFit("95% "+p, exactInterval, func(f *engine.Fit) string {
			if i >= len(f.Interval95) {
				return "-"
			}
			return interval(f.Interval95[i][0], f.Interval95[i][1])
		})
	}
	for i, p := range r.Params {
		perFit("mean err (sd) "+p, "", func(f *engine.Fit) string { return at(f.MeanErrSD, i) })
		perFit("sd ratio "+p, "", func(f *engine.Fit) string { return at(f.SDRatio, i) })
	}
	for i := range r.Params {
		for j := i + 1; j < len(r.Params); j++ {
			perFit("corr "+r.Params[i]+","+r.Params[j], at2(r.Exact.Corr, i, j),
				func(f *engine.Fit) string { return at2(f.Corr, i, j) })
		}
	}
	perFit("log-evidence", num(r.Exact.LogZ), func(f *engine.Fit) string {
		switch {
		case f.LogZ != nil:
			return num(*f.LogZ)
		case f.ELBO != nil:
			return num(*f.ELBO) + " (ELBO)"
		}
		return "-"
	})
	perFit("KL(q||p)", "", func(f *engine.Fit) string { return num(f.KLqp) })
	perFit("KL(p||q)", "", func(f *engine.Fit) string { return num(f.KLpq) })
	perFit("Hellinger", "", func(f *engine.Fit) string { return num(f.Hellinger) })
	perFit("95% coverage", "", func(f *engine.Fit) string { return export.Percent(f.Coverage95) })
	tw.Flush()

	if len(r.Modes) > 0 {
		fmt.Fprintf(w, "\nmodes (%d):\n", len(r.Modes))
		for _, m := range r.Modes {
			if m.Cost != nil {
				fmt.Fprintf(w, "  at (%s)  J %s  mass %s\n", joinNums(m.X), num(*m.Cost), num(m.Mass))
				continue
			}
			fmt.Fprintf(w, "  at (%s)  log p %s  mass %s\n", joinNums(m.X), num(m.LogDensity), num(m.Mass))
		}
	}
	if c := r.Curvature; c != nil {
		fmt.Fprintln(w, "\ncurvature (fitting scale): -Hessian at the mode | -E_q[Hessian] at the reverse-KL optimum")
		for i := range c.AtMode {
			fmt.Fprintf(w, "  %s | %s\n", joinNums(c.AtMode[i]), joinNums(c.Averaged[i]))
		}
		fmt.Fprintf(w, "  %s\n", c.Summary)
	}
	if len(r.Diagnostics) > 0 {
		fmt.Fprintln(w, "\ndiagnostics:")
		for _, d := range r.Diagnostics {
			fmt.Fprintf(w, "  %-7s %s: %s\n", d.Severity, d.Code, d.Message)
		}
	}
	fmt.Fprintf(w, "\ntime: %.1f ms\n", r.Timing.Total)
	fmt.Fprintln(w, "These are numerical approximations with estimated errors; check results that feed a consequential decision with a full inference method.")
}

func row(w io.Writer, cells ...string) {
	fmt.Fprintln(w, strings.Join(cells, "\t")+"\t")
}

// num prints a number with 5 significant digits; non-finite values as words.
func num(v float64) string {
	switch {
	case math.IsNaN(v):
		return "n/a"
	case math.IsInf(v, 1):
		return "inf"
	case math.IsInf(v, -1):
		return "-inf"
	}
	return fmt.Sprintf("%.5g", v)
}

func at(v []float64, i int) string {
	if i >= len(v) {
		return "-"
	}
	return num(v[i])
}

func at2(m [][]float64, i, j int) string {
	if i >= len(m) || j >= len(m[i]) {
		return "-"
	}
	return num(m[i][j])
}

func interval(lo, hi float64) string { return "[" + num(lo) + ", " + num(hi) + "]" }

func joinNums(v []float64) string {
	s := make([]string, len(v))
	for i, x := range v {
		s[i] = num(x)
	}
	return strings.Join(s, ", ")
}

func joinInts(v []int, sep string) string {
	s := make([]string, len(v))
	for i, x := range v {
		s[i] = fmt.Sprint(x)
	}
	return strings.Join(s, sep)
}
