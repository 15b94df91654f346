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
