package ui

import (
	"strings"
	"testing"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/plot"
)

func TestTableMarksBestAndAbsent(t *testing.T) {
	r := gaussResult([]string{"a", "b"}, []float64{1, -2}, [][]float64{{1, 0.5}, {0.5, 2}}, 0.4)
	secs := Table(r, nil)
	if len(secs) != 4 { // a, b, correlations, evidence and divergence
		t.Fatalf("%d sections", len(secs))
	}
	row := func(sec int, label string) Row {
		for _, r := range secs[sec].Rows {
			if r.Label == label {
				return r
			}
		}
		t.Fatalf("no row %q in section %q", label, secs[sec].Title)
		return Row{}
	}
	mean := row(0, "mean")
	// Laplace's mean is 0.4 sd off; the other fits are exact, so they share
	// the mark and Laplace does not.
	if mean.Cells[plot.Laplace].Best || !mean.Cells[plot.ReverseKL].Best || !mean.Cells[plot.ForwardKL].Best {
		t.Errorf("mean marks wrong: %+v", mean.Cells)
	}
	if got := mean.Cells[plot.Laplace].Sub; got != "+0.40 sd" {
		t.Errorf("Laplace mean deviation %q", got)
	}
	// The mean-field fit is absent: shown as absent with a reason, never marked.
	if c := mean.Cells[plot.MeanField]; c.Text != "—" || c.Absent == "" || c.Best {
		t.Errorf("absent fit cell %+v", c)
	}
	kl := row(3, "KL(q‖p)")
	if !kl.Cells[plot.ReverseKL].Best || kl.Cells[plot.Laplace].Best || kl.Cells[plot.ForwardKL].Best {
		t.Errorf("KL(q||p) marks wrong: %+v", kl.Cells)
	}
	ev := row(3, "log-evidence")
	// |Laplace - log Z| = 0.2 and |ELBO - log Z| = 0.05: the ELBO is closer.
	if !ev.Cells[plot.ReverseKL].Best || ev.Cells[plot.Laplace].Best {
		t.Errorf("evidence marks wrong: %+v", ev.Cells)
	}
	if ev.Cells[plot.ForwardKL].Absent == "" {
		t.Error("moment matching has no evidence estimate but shows one")
	}
	cov := row(3, "95 % coverage")
	if cov.Cells[plot.ReverseKL].Text != "94.0 %" {
		t.Errorf("coverage text %q", cov.Cells[plot.ReverseKL].Text)
	}
	corr := row(2, "corr(a, b)")
	if corr.Cells[plot.Exact].Text != "0.354" {
		t.Errorf("exact correlation %q, want 0.354 (0.5/sqrt(2))", corr.Cells[plot.Exact].Text)
	}
}

func TestMarkBestNeedsTwo(t *testing.T) {
	var r Row
	s := nanScores()
	s[plot.Laplace] = 1
	markBest(&r, s)
	if r.Cells[plot.Laplace].Best {
		t.Error("a single fit was marked best")
	}
}

func TestFmtScaled(t *testing.T) {
	cases := []struct {
		v, scale float64
		want     string
	}{
		{1000.1234, 0.01, "1000.1234"},
		{0.51234, 2, "0.51"},
		{-3.14159, 0.1, "−3.142"},
	}
	for _, c := range cases {
		if got := fmtScaled(c.v, c.scale); got != c.want {
			t.Errorf("fmtScaled(%g, %g) = %q, want %q", c.v, c.scale, got, c.want)
		}
	}
}

func TestTableReportsTheOptimiser(t *testing.T) {
	r := gaussResult([]string{"a"}, []float64{0}, [][]float64{{1}}, 0)
	fitOf(r, plot.ReverseKL).Converged = false
	fitOf(r, plot.ReverseKL).Iterations = 15
	fitOf(r, plot.ReverseKL).Residual = 0.0017
	secs := Table(r, nil)
	last := secs[len(secs)-1].Rows
	row := last[len(last)-1]
	if row.Label != "optimiser" {
		t.Fatalf("last row %q", row.Label)
	}
	if c := row.Cells[plot.ReverseKL]; c.Text != "not converged" || c.Sub != "15 steps, residual 0.0017" {
		t.Errorf("reverse-KL cell %+v", c)
	}
	if c := row.Cells[plot.Laplace]; c.Text != "converged" || c.Sub != "7 steps" {
		t.Errorf("Laplace cell %+v", c)
	}
	for _, m := range plot.Methods {
		if row.Cells[m].Best {
			t.Error("the optimiser row marks no best")
		}
	}
}

// A correlation that is zero up to rounding (a symmetric posterior's
// 4.16e-17, seen on the regression with unknown noise) shows as 0.000, not
// with an exponent; others keep three significant digits (the sign as the
// page writes it).
func TestFmtCorr(t *testing.T) {
	cases := []struct {
		v    float64
		want string
	}{
		{4.16e-17, "0.000"},
		{-6.9e-15, "0.000"},
		{-0.826, "−0.826"},
		{0.00123, "0.00123"},
		{1, "1.00"},
	}
	for _, c := range cases {
		if got := fmtCorr(c.v); got != c.want {
			t.Errorf("fmtCorr(%g) = %q, want %q", c.v, got, c.want)
		}
	}
}

// The grid's facts name the exact reference: the grid that only scouted
// beside the rule, the grid evaluated in full beside the rule (for the
// marginals its walks do not resolve), and the grid as the reference, each
// with the source of its log Z error estimate.
func TestGridFactsNameTheReference(t *testing.T) {
	cases := []struct {
		rule, scouted bool
		want          []string
	}{
		{true, true, []string{"quadrature around the modes", "it only scouts", "nested steps"}},
		{true, false, []string{"quadrature around the modes", "evaluated in full", "nested steps"}},
		{false, false, []string{"change from half resolution"}},
	}
	for _, c := range cases {
		r := gaussResult([]string{"a", "b"}, []float64{0, 1}, [][]float64{{1, 0}, {0, 1}}, 0)
		r.Exact.Rule, r.Grid.Scouted = c.rule, c.scouted
		r.Grid.Lo, r.Grid.Hi, r.Grid.Points = []float64{-5, -4}, []float64{5, 6}, []int{31, 31}
		html := app.HTMLString(&ModesGrid{Shown: &Shown{Result: r}})
		for _, w := range c.want {
			if !strings.Contains(html, w) {
				t.Errorf("rule %v, scouted %v: the facts do not say %q:\n%s", c.rule, c.scouted, w, html)
			}
		}
		if !c.rule && strings.Contains(html, "quadrature around the modes") {
			t.Errorf("the grid as the reference, yet the facts name the rule:\n%s", html)
		}
	}
}
