package export

import (
	"bytes"
	"context"
	"encoding/csv"
	"math"
	"strconv"
	"strings"
	"testing"

	"bellcheck/engine"
	"bellcheck/engine/model"
)

// candidateResult analyses a correlated normal (mean (1, -1), covariance
// [[1, .6], [.6, 2]]) with one candidate equal to it.
func candidateResult(t *testing.T) *engine.Result {
	t.Helper()
	m, err := model.Parse("param x\nparam y\n-(2*(x - 1)^2 - 1.2*(x - 1)*(y + 1) + (y + 1)^2)/(2*1.64)\n")
	if err != nil {
		t.Fatal(err)
	}
	opts := engine.Options{Candidates: []engine.Candidate{{Name: "by_hand", Mean: []float64{1, -1}, Cov: [][]float64{{1, 0.6}, {0.6, 2}}}}}
	r, err := engine.Analyse(context.Background(), m, opts, nil)
	if err != nil {
		t.Fatal(err)
	}
	return r
}

// The CSV carries a candidate's rows under candidate:NAME with the same
// numbers as the JSON's, and each fit's precision.
func TestCSVCandidatesAndPrecision(t *testing.T) {
	r := candidateResult(t)
	b, err := CSV(r)
	if err != nil {
		t.Fatal(err)
	}
	recs, err := csv.NewReader(bytes.NewReader(b)).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	found := map[string]string{}
	for _, rec := range recs {
		found[rec[0]+"|"+rec[1]+"|"+rec[2]+"|"+rec[3]] = rec[4]
	}
	c := r.Candidates[0].Fit
	for key, want := range map[string]float64{
		"kl_q_p|||candidate:by_hand":     c.KLqp,
		"coverage95|||candidate:by_hand": c.Coverage95,
		"mean|y||candidate:by_hand":      c.FittingScale.Mean[1],
		"precision|x|y|laplace":          r.Fits[engine.Laplace].Precision[0][1],
		"precision|y|y|reverse_kl":       r.Fits[engine.ReverseKL].Precision[1][1],
	} {
		got, ok := found[key]
		if !ok {
			t.Errorf("no row %s", key)
			continue
		}
		if v, err := strconv.ParseFloat(got, 64); err != nil || v != want {
			t.Errorf("%s: %s, want %v", key, got, want)
		}
	}
}

// The Markdown and LaTeX of the result table have a column per fit and per
// candidate; the curvature table holds both matrices and the sentence.
func TestResultAndCurvatureTables(t *testing.T) {
	r := candidateResult(t)
	md := Markdown(ResultTable(r))
	head := strings.SplitN(md, "\n", 2)[0]
	for _, col := range []string{"exact", "Laplace", "reverse KL", "by\\_hand (yours)"} {
		if !strings.Contains(head, col) {
			t.Errorf("header %q lacks %q", head, col)
		}
	}
	if !strings.Contains(md, "| KL(q\\|\\|p) |") {
		t.Errorf("no KL row:\n%s", md)
	}
	ct, ok := CurvatureTable(r)
	if !ok {
		t.Fatal("no curvature table")
	}
	// -Hessian of this density is the inverse covariance
	// [[2, -0.6], [-0.6, 1]]/1.64 (closed form): 1.2195 and -0.36585.
	cmd := Markdown(ct)
	for _, want := range []string{"−Hessian at the mode (Laplace)", "| x | 1.2195 | -0.36585 |", "nearly the same spread"} {
		if !strings.Contains(cmd, want) {
			t.Errorf("curvature table lacks %q:\n%s", want, cmd)
		}
	}
	if tex := LaTeX(ct); !strings.Contains(tex, "1.2195") || !strings.Contains(tex, "\\begin{tabular}") {
		t.Errorf("LaTeX:\n%s", tex)
	}
	if _, ok := CurvatureTable(&engine.Result{}); ok {
		t.Error("a curvature table without a comparison")
	}
}

// TestCoverageAsThePageShowsIt: the text tables print a coverage as the
// page does, to a tenth of a percent; the comparison computes it to about
// 2.5e-4, so a fit equal to a Gaussian posterior (0.94975) reads 95.0 %.
func TestCoverageAsThePageShowsIt(t *testing.T) {
	for _, c := range []struct {
		v    float64
		want string
	}{{0.94975, "95.0 %"}, {0.82124, "82.1 %"}, {1, "100.0 %"}, {0, "0.0 %"}, {math.NaN(), "n/a"}} {
		if got := Percent(c.v); got != c.want {
			t.Errorf("Percent(%v) = %q, want %q", c.v, got, c.want)
		}
	}
}
