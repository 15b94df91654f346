package eval

import (
	"testing"

	"bellcheck/engine/model"
)

func TestSmoke(t *testing.T) {
	src := "param x\nparam y\n-x^2/200 - (y + 0.05*x^2 - 5)^2/2\n"
	m, err := model.Parse(src)
	if err != nil {
		t.Fatal(err)
	}
	ev, err := Compile(m)
	if err != nil {
		t.Fatal(err)
	}
	t.Log(ev.Tape())
	x := []float64{1.5, 2}
	g := make([]float64, 2)
	h := make([]float64, 4)
	v := ev.LogDensity(x)
	v2 := ev.LogDensityDerivs(x, g, h)
	out := make([]float64, 1)
	ev.LogDensityBlock([][]float64{{1.5}, {2}}, out)
	t.Log(v, v2, g, h, out)
	src2 := "y = [1, 2, 3.5, 4]\nt = [0, 1, 2, 3]\n-sum((y - a - b*t)^2)/(2*s^2) - len(y)*log(s)\n"
	m, err = model.Parse(src2)
	if err != nil {
		t.Fatal(err)
	}
	ev, err = Compile(m)
	if err != nil {
		t.Fatal(err)
	}
	t.Log(ev.Tape())
	x = []float64{0.5, 1, 0.7}
	g = make([]float64, 3)
	h = make([]float64, 9)
	t.Log(ev.LogDensity(x), ev.LogDensityDerivs(x, g, h), g, h)
}
