package ui

import (
	"testing"

	"bellcheck/engine"
	"bellcheck/engine/model"
)

func TestShownStaysTheSamePointerUntilTheResultChanges(t *testing.T) {
	m, err := model.Parse(srcA)
	if err != nil {
		t.Fatal(err)
	}
	p := NewPage()
	if p.shown() != nil {
		t.Fatal("a result shown before any analysis")
	}
	p.s.Result, p.s.ResultModel = resultFor(m), m
	p.figs = numbered(BuildFigures(p.s.Result, View{}))
	p.sections = Table(p.s.Result, m)
	first := p.shown()
	if first == nil || p.shown() != first {
		t.Fatal("the same result is not the same Shown pointer")
	}
	p.figs = numbered(BuildFigures(p.s.Result, View{Log: true}))
	second := p.shown()
	if second == first || second.Serial == first.Serial || second.Figures.Serial == first.Figures.Serial {
		t.Errorf("new figures kept the Shown value or its serials: %d %d", first.Serial, second.Serial)
	}
	if second.Figures.Main != nil && second.Figures.Main.Serial == 0 {
		t.Error("the panel was not numbered")
	}
}

func TestParamChoicesMeetTheIndexOrderInOnePlace(t *testing.T) {
	m, err := model.Parse("param a\nparam b in [0, inf]\nld_normal(a, 0, 1) + ld_gamma(b, 2, 1)\n")
	if err != nil {
		t.Fatal(err)
	}
	byIndex := []engine.ParamOptions{{}, {Scale: engine.Log, Points: 99}, {Points: 7}}
	c := ChoicesOf(m, byIndex)
	if len(c) != 1 || c["b"].Scale != engine.Log || c["b"].Points != 99 {
		t.Errorf("by name: %+v (the option beyond the model's parameters must be dropped)", c)
	}
	back := c.ByIndex(m)
	if len(back) != 2 || back[0] != (engine.ParamOptions{}) || back[1] != byIndex[1] {
		t.Errorf("back by index: %+v", back)
	}
	if ParamChoices(nil).ByIndex(m) != nil || len(ChoicesOf(nil, byIndex)) != 0 {
		t.Error("no options, or no model, must give none")
	}
}

// keepDrawn keeps the panels already on the page whose drawing a new
// result repeats (an edit of a comment; the whole result after an early
// one), and takes every panel whose drawing changed.
func TestKeepDrawnKeepsOnlyTheSameDrawings(t *testing.T) {
	names := []string{"a", "b", "c"}
	mean := []float64{0, 1, 2}
	cov := [][]float64{{1, 0.5, 0}, {0.5, 1, 0}, {0, 0, 4}}
	drawn := numbered(BuildFigures(gaussResult(names, mean, cov, 0), View{}))
	same := keepDrawn(drawn, numbered(BuildFigures(gaussResult(names, mean, cov, 0), View{})))
	for r, row := range same.Grid {
		for c, pn := range row {
			if pn != nil && pn != drawn.Grid[r][c] {
				t.Errorf("panel %d,%d of the same result drawn again was not kept", r, c)
			}
		}
	}
	// The correlation of b and c changes: their pair's drawing, and no
	// marginal's.
	cov2 := [][]float64{{1, 0.5, 0}, {0.5, 1, 0.9}, {0, 0.9, 4}}
	fresh := numbered(BuildFigures(gaussResult(names, mean, cov2, 0), View{}))
	bc := fresh.Grid[2][1]
	next := keepDrawn(drawn, fresh)
	for r, row := range next.Grid {
		for c, pn := range row {
			if pn == nil {
				continue
			}
			kept := pn == drawn.Grid[r][c]
			switch {
			case r == 2 && c == 1 && (kept || pn != bc):
				t.Errorf("the pair of b and c, whose correlation changed, was not drawn anew")
			case r == c && !kept:
				t.Errorf("the marginal %d, unchanged, was drawn anew", r)
			}
		}
	}
	if keepDrawn(drawn, numbered(BuildFigures(gaussResult(names, mean, cov, 0), View{Log: true}))).Grid[0][0] == drawn.Grid[0][0] {
		t.Error("a marginal drawn on the log scale kept the linear drawing")
	}
}
