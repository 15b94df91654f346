package ui

import (
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"bellcheck/app/figure"
	"bellcheck/app/plot"
	"bellcheck/engine"
	"bellcheck/engine/gauss"
)

// farCandidate adds to a gaussResult a candidate Gaussian named "mine" with
// the exact covariance and its mean shift exact sds off along the first
// parameter, with its marginals on the plots' grids and its contours, as
// the engine would give them (a Gaussian's marginals are Gaussian: closed
// form). Its KL(q||p) is set below every fit's, so a test can check that
// candidates are not ranked.
func farCandidate(r *engine.Result, shift float64) {
	d := len(r.Params)
	sd := r.Exact.SD
	m := append([]float64(nil), r.Exact.Mean...)
	m[0] += shift * sd[0]
	f := &engine.Fit{Mean: m, Cov: r.Exact.Cov, SD: sd, Corr: r.Exact.Corr, KLqp: 0.001, KLpq: 0.002, Hellinger: 0.01, Coverage95: 0.951}
	for i := range d {
		f.Interval95 = append(f.Interval95, [2]float64{m[i] - 1.959964*sd[i], m[i] + 1.959964*sd[i]})
		f.MeanErrSD = append(f.MeanErrSD, (m[i]-r.Exact.Mean[i])/sd[i])
		f.SDRatio = append(f.SDRatio, 1)
	}
	r.Candidates = engine.Candidates{{Name: "mine", Fit: f}}
	normal := func(x, mu, s float64) float64 {
		z := (x - mu) / s
		return math.Exp(-z*z/2) / (s * math.Sqrt(2*math.Pi))
	}
	for k := range r.Plots.Marginals {
		mg := &r.Plots.Marginals[k]
		curve := make([]float64, len(mg.X))
		for j, x := range mg.X {
			curve[j] = normal(x, m[mg.Param], sd[mg.Param])
		}
		mg.Candidates = [][]float64{curve}
	}
	for k := range r.Plots.Pairs {
		p := &r.Plots.Pairs[k]
		c := r.Exact.Cov
		q, err := gauss.Prepare(gauss.Gaussian{Mean: []float64{m[p.I], m[p.J]},
			Cov: mat.NewSymDense(2, []float64{c[p.I][p.I], c[p.I][p.J], c[p.I][p.J], c[p.J][p.J]})})
		if err != nil {
			panic(err)
		}
		var lines [3][][2]float64
		for l, mass := range figure.Masses {
			lines[l] = q.Ellipse(0, 1, mass, 64)
		}
		p.CandidateEllipses = [][3][][2]float64{lines}
	}
}

// The candidates are columns of the results table: every row has a cell
// per candidate, scored like the fits, and no candidate takes the fits'
// mark even where it scores better.
func TestTableCandidateColumns(t *testing.T) {
	r := gaussResult([]string{"a", "b"}, []float64{1, -2}, [][]float64{{1, 0.5}, {0.5, 2}}, 0.4)
	farCandidate(r, 2)
	secs := Table(r, nil)
	for _, sec := range secs {
		for _, row := range sec.Rows {
			if len(row.Cands) != 1 {
				t.Fatalf("row %s %q has %d candidate cells, want 1", sec.Title, row.Label, len(row.Cands))
			}
			if row.Cands[0].Best {
				t.Errorf("row %s %q marks the candidate", sec.Title, row.Label)
			}
		}
	}
	find := func(sec int, label string) Row {
		for _, row := range secs[sec].Rows {
			if row.Label == label {
				return row
			}
		}
		t.Fatalf("no row %q", label)
		return Row{}
	}
	// The mean is 2 exact sds off: 1 + 2*1 = 3.
	if c := find(0, "mean").Cands[0]; c.Text != "3.00" || c.Sub != "+2.0 sd" {
		t.Errorf("candidate mean cell %+v, want 3.00 and +2.0 sd", c)
	}
	// b's sd is sqrt(2), the candidate's the same.
	if c := find(1, "sd").Cands[0]; c.Text != "1.414" || c.Sub != "×1.00" {
		t.Errorf("candidate sd cell %+v, want 1.414 and the ratio ×1.00", c)
	}
	// Its KL(q||p) 0.001 is below the reverse-KL fit's 0.01: the fit keeps
	// the mark (candidates are not ranked).
	kl := find(3, "KL(q‖p)")
	if kl.Cands[0].Text != "0.00100" || !kl.Cells[plot.ReverseKL].Best {
		t.Errorf("KL row: candidate %+v, reverse KL %+v", kl.Cands[0], kl.Cells[plot.ReverseKL])
	}
	if c := find(3, "log-evidence").Cands[0]; c.Text != "—" || !strings.Contains(c.Absent, "your own") {
		t.Errorf("candidate evidence cell %+v, want absent with its reason", c)
	}
	if c := find(3, "optimiser").Cands[0]; c.Text != "—" || c.Absent == "" {
		t.Errorf("candidate optimiser cell %+v, want absent", c)
	}
	// A candidate that was not scored is shown absent in every row.
	r.Candidates[0].Fit = nil
	for _, sec := range Table(r, nil) {
		for _, row := range sec.Rows {
			if c := row.Cands[0]; c.Text != "—" || c.Absent == "" {
				t.Errorf("row %q: unscored candidate cell %+v", row.Label, c)
			}
		}
	}
}

// reachSDs is how far the plots must reach beyond a candidate's mean, in
// its sds, to show its outer (99 %) contour: sqrt(-2 log 0.01) (the
// bivariate normal's contour holding mass c has squared Mahalanobis radius
// -2 log(1-c); closed form).
var reachSDs = math.Sqrt(-2 * math.Log(0.01))

// A candidate 10 sds off lies beyond the plots' grid (6 sds): the 1-D, the
// 2-D and the grid of 3-D plots widen past the grid to show its outer
// contour, the heat map is empty beyond the grid, and the candidate's
// marginal is drawn there.
func TestPlotsWidenForCandidates(t *testing.T) {
	const shift = 10
	want := 1 + (shift+reachSDs)*1 // a's mean 1, sd 1

	r1 := gaussResult([]string{"a"}, []float64{1}, [][]float64{{1}}, 0)
	farCandidate(r1, shift)
	fs := BuildFigures(r1, View{})
	if fs == nil || fs.Main == nil {
		t.Fatal("no 1-D figure")
	}
	if got := fs.Main.Fig.X.D1; got < want {
		t.Errorf("1-D view ends at %g, want at least %g (the candidate's mean + %.3f sd)", got, want, reachSDs)
	}
	col := figure.CandidateStyle(0, "mine").Colour
	if !strings.Contains(fs.Main.Fig.SVG, `stroke="`+col+`"`) {
		t.Error("the 1-D figure does not draw the candidate")
	}

	r2 := gaussResult([]string{"a", "b"}, []float64{1, -2}, [][]float64{{1, 0.5}, {0.5, 2}}, 0)
	farCandidate(r2, shift)
	fs = BuildFigures(r2, View{})
	f := fs.Main.Fig
	if f.X.D1 < want {
		t.Errorf("2-D view ends at %g across, want at least %g", f.X.D1, want)
	}
	if grid := r2.Plots.Pairs[0].X; !(f.X.D1 > grid[len(grid)-1]) {
		t.Fatalf("the test needs a view beyond the grid (%g), got %g", grid[len(grid)-1], f.X.D1)
	}
	// The rightmost column of the heat map lies beyond the grid: the
	// colour of zero density, not the grid's edge smeared out.
	zero := plot.Density.Table(256)[0]
	h := f.Heat
	for row := 0; row < h.Height; row += 7 {
		px := h.Pixels[4*(row*h.Width+h.Width-1):]
		if px[0] != zero[0] || px[1] != zero[1] || px[2] != zero[2] {
			t.Fatalf("heat map pixel beyond the grid at row %d is %v, want %v", row, px[:4], zero)
		}
	}
	// Without the candidate, the view stays within the grid.
	r2.Candidates = nil
	for k := range r2.Plots.Pairs {
		r2.Plots.Pairs[k].CandidateEllipses = nil
	}
	for k := range r2.Plots.Marginals {
		r2.Plots.Marginals[k].Candidates = nil
	}
	if g := BuildFigures(r2, View{}).Main.Fig; g.X.D1 > r2.Plots.Pairs[0].X[60] {
		t.Errorf("without candidates the view reaches %g, beyond the grid", g.X.D1)
	}

	r3 := gaussResult([]string{"a", "b", "c"}, []float64{1, -2, 0}, [][]float64{{1, 0.5, 0}, {0.5, 2, 0}, {0, 0, 1}}, 0)
	farCandidate(r3, shift)
	fs = BuildFigures(r3, View{})
	diag := fs.Grid[0][0].Fig
	if diag.X.D1 < want {
		t.Errorf("the grid's range of a ends at %g, want at least %g", diag.X.D1, want)
	}
	for _, row := range []int{1, 2} {
		if p := fs.Grid[row][0]; p == nil || p.Fig.X.D1 != diag.X.D1 {
			t.Errorf("pair (a, %s) does not share a's widened range", r3.Params[row])
		}
	}
}

// Held axes win over the widening: a slider's successive results keep the
// ranges the user held.
func TestHeldAxesKeepRangeWithCandidate(t *testing.T) {
	r := gaussResult([]string{"a", "b"}, []float64{1, -2}, [][]float64{{1, 0.5}, {0.5, 2}}, 0)
	farCandidate(r, 10)
	held := &Axes{Params: r.Params, Ranges: [][2]float64{{-3, 5}, {-6, 2}}}
	f := BuildFigures(r, View{Hold: held}).Main.Fig
	if f.X.D0 != -3 || f.X.D1 != 5 || f.Y.D0 != -6 || f.Y.D1 != 2 {
		t.Errorf("held view %g..%g, %g..%g", f.X.D0, f.X.D1, f.Y.D0, f.Y.D1)
	}
}
