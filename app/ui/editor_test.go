package ui

import (
	"strings"
	"testing"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/engine/model"
)

// TestEditorMarksTheParsersPosition checks that the mark sits on the
// character the parser names, after multi-byte characters (the position's
// byte offset is used as the parser gives it).
func TestEditorMarksTheParsersPosition(t *testing.T) {
	text := "param μ\nμσ = 1\nld_normal(μ, 0, μσ ° 2)\n"
	var s Session
	if s.Edit(text) {
		t.Fatal("a stray character was accepted")
	}
	ed := &Editor{Initial: text, Text: text, Checked: s.Source, Errors: s.Errors}
	html := app.HTMLString(ed)
	if !strings.Contains(html, `<mark class="err-mark">°</mark>`) {
		t.Errorf("the mark is not on the stray character:\n%s", html)
	}
	// Line 3, column 20 counted in characters (the parser's convention).
	if !strings.Contains(html, "line 3, column 20: ") {
		t.Errorf("the position is not the parser's:\n%s", html)
	}
}

func TestEditorMarksTheErrorAtItsColumn(t *testing.T) {
	text := "param x\nld_normal(x, 0, σ)\n"
	ed := &Editor{Initial: text, Text: text, Checked: text,
		Errors: model.ErrorList{{Pos: model.Pos{Offset: len("param x\nld_normal(x, 0, "), Line: 2, Col: 17}, Msg: "unknown name σ", Hint: "declare it"}}}
	html := app.HTMLString(ed)
	if !strings.Contains(html, `<mark class="err-mark">σ</mark>`) {
		t.Errorf("the mark is not on the offending character:\n%s", html)
	}
	for _, want := range []string{"line 2, column 17: ", "unknown name σ", "Hint: declare it", `class="ln ln-err">2<`, "aria-invalid"} {
		if !strings.Contains(html, want) {
			t.Errorf("editor lacks %q", want)
		}
	}
	// While a check is pending the old marks are hidden (the text moved).
	ed.Pending = true
	if html := app.HTMLString(ed); strings.Contains(html, "err-mark") || !strings.Contains(html, "checking") {
		t.Error("marks shown for a text not yet checked")
	}
}

func TestFigureSetShapes(t *testing.T) {
	for _, c := range []struct {
		names []string
		main  bool
		grid  int
	}{
		{[]string{"a"}, true, 0},
		{[]string{"a", "b"}, true, 0},
		{[]string{"a", "b", "c"}, false, 3},
		{[]string{"a", "b", "c", "d"}, false, 4},
	} {
		d := len(c.names)
		mean := make([]float64, d)
		cov := make([][]float64, d)
		for i := range cov {
			cov[i] = make([]float64, d)
			for j := range cov[i] {
				cov[i][j] = 0.3
			}
			cov[i][i] = 1
		}
		fs := BuildFigures(gaussResult(c.names, mean, cov, 0.2), View{})
		if fs == nil || (fs.Main != nil) != c.main || len(fs.Grid) != c.grid {
			t.Fatalf("%d-D: main %v grid %d", d, fs.Main != nil, len(fs.Grid))
		}
		for row := range fs.Grid {
			for col := range fs.Grid[row] {
				p := fs.Grid[row][col]
				if (p != nil) != (row >= col) {
					t.Errorf("%d-D: cell (%d, %d) present %v", d, row, col, p != nil)
				}
				if p != nil && row > col && (p.I != col || p.J != row || p.Fig.Heat == nil) {
					t.Errorf("%d-D: pair cell (%d, %d) is I=%d J=%d", d, row, col, p.I, p.J)
				}
				// Columns share their parameter's range, and so do rows.
				if p != nil {
					diag := fs.Grid[col][col].Fig.X
					if p.Fig.X.D0 != diag.D0 || p.Fig.X.D1 != diag.D1 {
						t.Errorf("%d-D: cell (%d, %d) x range differs from its column's marginal", d, row, col)
					}
					if row > col {
						rd := fs.Grid[row][row].Fig.X
						if p.Fig.Y.D0 != rd.D0 || p.Fig.Y.D1 != rd.D1 {
							t.Errorf("%d-D: cell (%d, %d) y range differs from its row's marginal", d, row, col)
						}
					}
				}
			}
		}
		if d == 2 {
			// The read-out at the plot's centre names both parameters and the
			// peak density of the standard correlated normal.
			f := fs.Main.Fig
			text, _, _, ok := fs.Main.ReadOut((f.Plot.X0+f.Plot.X1)/2, (f.Plot.Y0+f.Plot.Y1)/2)
			if !ok || !strings.Contains(text, "a = 0") || !strings.Contains(text, "b = 0") || !strings.Contains(text, "100 % of its peak") {
				t.Errorf("read-out %q", text)
			}
			if _, _, _, ok := fs.Main.ReadOut(0, 0); ok {
				t.Error("read-out outside the plot area")
			}
		}
	}
}

func TestEditorKeepsTheTextareaInPlace(t *testing.T) {
	// go-app diffs children by position: if the textarea moved when marks
	// appear, it would be rebuilt with the initial text, losing the edits.
	text := "param x\nld_normal(x, 0\n"
	for _, ed := range []*Editor{
		{Text: text, Checked: text},
		{Text: text, Checked: text, Errors: model.ErrorList{{Pos: model.Pos{Offset: len("param x\nld_normal(x, 0"), Line: 2, Col: 15}, Msg: "expected ')'"}}},
	} {
		html := app.HTMLString(ed)
		under, area := strings.Index(html, `class="code-underlay"`), strings.Index(html, "<textarea")
		end := strings.LastIndex(html[:max(area, 0)], "</pre>")
		if under < 0 || area < 0 || end < under || strings.TrimSpace(html[end+len("</pre>"):area]) != "" {
			t.Fatalf("the textarea is not the underlay's next sibling:\n%s", html)
		}
	}
}

// BenchmarkBuildFigures measures drawing every plot of a result: a 2-D pair
// with edge marginals, and a 4-D grid of 6 pairs and 4 marginals.
func BenchmarkBuildFigures(b *testing.B) {
	for _, d := range []int{2, 4} {
		names := []string{"a", "b", "c", "d"}[:d]
		mean := make([]float64, d)
		cov := make([][]float64, d)
		for i := range cov {
			cov[i] = make([]float64, d)
			for j := range cov[i] {
				cov[i][j] = 0.4
			}
			cov[i][i] = 1
		}
		r := gaussResult(names, mean, cov, 0.2)
		b.Run(names[d-1], func(b *testing.B) {
			for range b.N {
				BuildFigures(r, View{})
			}
		})
	}
}
