package figure

import (
	"math"
	"strings"
	"testing"

	"bellcheck/app/plot"
	"bellcheck/engine"
)

// normalPDF is the normal density (closed form).
func normalPDF(x, sd float64) float64 {
	return math.Exp(-x*x/(2*sd*sd)) / (sd * math.Sqrt(2*math.Pi))
}

// A fit ten times narrower than the exact density peaks ten times higher
// (a normal's peak is 1/(sd sqrt(2 pi))): it rises above the panel, which
// follows the exact density to twice its peak, and is marked at the top
// edge; a fit of the same width is not. A candidate is drawn in its own
// stroke.
func TestMarginalMarksClippedFitAndDrawsCandidates(t *testing.T) {
	m := &engine.Marginal1D{}
	for i := 0; i <= 400; i++ {
		x := -4 + 8*float64(i)/400
		m.X = append(m.X, x)
		m.Exact = append(m.Exact, normalPDF(x, 1))
		m.Fits[engine.Laplace] = append(m.Fits[engine.Laplace], normalPDF(x, 0.1))
		m.Fits[engine.ForwardKL] = append(m.Fits[engine.ForwardKL], normalPDF(x, 1))
	}
	m.Candidates = [][]float64{append([]float64(nil), m.Exact...)}
	f := Marginal(m, Options{ID: "m", XLabel: "x", Candidates: []string{"mine"}})
	if f == nil {
		t.Fatal("no figure")
	}
	wellFormed(t, f.SVG)
	lap := plot.StyleOf(plot.CurveOf(engine.Laplace))
	if !strings.Contains(f.SVG, lap.Name+" peaks at 3.989") {
		t.Errorf("no mark for the Laplace curve above the panel (peak 1/(0.1 sqrt(2 pi)) = 3.989)")
	}
	fkl := plot.StyleOf(plot.CurveOf(engine.ForwardKL))
	if strings.Contains(f.SVG, fkl.Name+" peaks at") {
		t.Errorf("a fit within the panel is marked as above it")
	}
	if c := CandidateStyle(0, "mine"); !strings.Contains(f.SVG, `stroke="`+c.Colour+`"`) {
		t.Errorf("the candidate is not drawn in its colour %s", c.Colour)
	}
	if !(f.Y.D1 > 2*normalPDF(0, 1)) || f.Y.D1 > 2.2*normalPDF(0, 1) {
		t.Errorf("density axis top %g, want just above twice the exact peak", f.Y.D1)
	}
}

// The candidates' looks differ from every fit's colour.
func TestCandidateStylesApart(t *testing.T) {
	for k := range candidateLooks {
		c := CandidateStyle(k, "c")
		for _, m := range plot.Methods {
			if strings.EqualFold(plot.StyleOf(m).Colour, c.Colour) {
				t.Errorf("candidate %d shares colour %s with %s", k, c.Colour, plot.StyleOf(m).Name)
			}
		}
	}
}

// A candidate far off widens a marginal's view by at most maxReach times
// its width without candidates on that side; one that is near widens it to
// its mean + sqrt(-2 log 0.01) sds (the projection of its outer contour,
// closed form), beyond the grid, and is drawn there as a normal whose peak
// 1/(sd sqrt(2 pi)) sets the density axis.
func TestMarginalReachesCandidate(t *testing.T) {
	m := &engine.Marginal1D{}
	for i := 0; i <= 400; i++ {
		x := -4 + 8*float64(i)/400
		m.X = append(m.X, x)
		m.Exact = append(m.Exact, normalPDF(x, 1))
	}
	m.Candidates = [][]float64{make([]float64, len(m.X))} // its curve on the grid: negligible
	lo, hi := MarginalView(m, Options{})
	if !(hi > lo) || hi > 4 {
		t.Fatalf("view without the candidate's spread %g..%g", lo, hi)
	}
	far := Options{Candidates: []string{"far"}, CandidateX: []Spread{{Mean: 1000, SD: 1}}}
	flo, fhi := MarginalView(m, far)
	if flo != lo || math.Abs(fhi-(hi+maxReach*(hi-lo))) > 1e-9 {
		t.Errorf("far candidate: view %g..%g, want %g..%g (capped)", flo, fhi, lo, hi+maxReach*(hi-lo))
	}
	near := Options{Candidates: []string{"near"}, CandidateX: []Spread{{Mean: 5, SD: 0.5}}}
	_, nhi := MarginalView(m, near)
	if want := 5 + 0.5*math.Sqrt(-2*math.Log(0.01)); nhi < want || nhi > want+0.1*(nhi-lo)+1e-9 {
		t.Errorf("near candidate: view ends at %g, want %g plus the padding", nhi, want)
	}
	f := Marginal(m, near)
	if f == nil {
		t.Fatal("no figure")
	}
	if !strings.Contains(f.SVG, `stroke="`+CandidateStyle(0, "near").Colour+`"`) {
		t.Error("the candidate is not drawn")
	}
	// Its peak 1/(0.5 sqrt(2 pi)) = 0.798 is below twice the exact peak
	// (0.798 = 2 x 0.399): the axis reaches it.
	if peak := normalPDF(0, 0.5); f.Y.D1 < peak {
		t.Errorf("density axis top %g, below the candidate's peak %g", f.Y.D1, peak)
	}
}
