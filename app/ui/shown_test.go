package ui

import (
	"reflect"
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

// go-app renders a component again when its inputs differ from the last
// render's by reflect.DeepEqual, for which a NaN differs from itself: the
// parameters panel's inputs built twice from the same session must compare
// equal, before a result, with one whose grid only scouted, and with a
// grid that is the reference.
func TestParamViewsCompareEqualWhenNothingChanged(t *testing.T) {
	src := "param m\nparam s in [0, inf]\nld_normal(1.2, m, s) + ld_normal(0.8, m, s) - log(s)\n"
	var s Session
	s.Edit(src)
	run, _ := s.Begin(nowForTest())
	if run.Model == nil {
		t.Fatal("the model did not check")
	}
	check := func(when string) {
		t.Helper()
		a, b := ParamViews(&s), ParamViews(&s)
		if len(a) != 2 || !reflect.DeepEqual(a, b) {
			t.Errorf("%s: the panel's inputs built twice differ (go-app would render it at every update): %+v", when, a)
		}
	}
	check("before a result")
	res := gaussResult([]string{"m", "s"}, []float64{1, 0.5}, [][]float64{{0.1, 0}, {0, 0.01}}, 0)
	res.Grid.Scouted = true
	res.Grid.Lo, res.Grid.Hi, res.Grid.Points = []float64{0, 0.1}, []float64{2, 1}, []int{81, 81}
	s.Finish(run, res, nil, 0, 0)
	check("with a scouting grid")
	if v := ParamViews(&s); v[0].UsedPoints != 0 {
		t.Errorf("a scouting grid shown as the grid used: %+v", v[0])
	}
	res.Grid.Scouted = false
	check("with the reference grid")
	if v := ParamViews(&s); v[1].UsedPoints != 81 || v[1].UsedLo != 0.1 || v[1].UsedHi != 1 {
		t.Errorf("the reference grid's box and points not shown: %+v", v[1])
	}
}
