package engine

import (
	"context"
	"strings"
	"testing"

	"bellcheck/engine/model"
)

// A cooling curve (u' = -k (u - 20) from T0, six readings two time units
// apart) with four Runge-Kutta substeps between readings: besides the
// true decay rate (about 0.148, from the readings' ratio (35.9 - 20) / 70
// over ten units) the discretised model has a second mode near k = 5.47,
// where k h = 2.74 and the classical Runge-Kutta factor per step,
// 1 - z + z^2/2 - z^3/6 + z^4/24 at z = k h, is 0.93: four such steps
// decay as exp(-2 x 0.148) does (the factor by hand). With twice the
// substeps that mode's trajectory falls far faster and its log p changes
// by orders of magnitude: the ode_steps warning names it. The same model
// with k in [0, 1] keeps k h <= 0.5, where the step is fine for the
// equations: no warning.
func TestODEStepsWarns(t *testing.T) {
	const src = `t = [0, 2, 4, 6, 8, 10]
T = [90.1, 71.8, 58.2, 48.3, 41.0, 35.9]
param k in [0, HI]
param T0
param s in [0, inf]
ode t from 0 substeps 4
  u = T0 rate -k*(u - 20)
end
sum(ld_normal(T, u, s)) - log(s) + ld_normal(T0, 90, 10)
`
	for _, c := range []struct {
		hi   string
		want bool
	}{{"inf", true}, {"1", false}} {
		m, err := model.Parse(strings.Replace(src, "HI", c.hi, 1))
		if err != nil {
			t.Fatal(err)
		}
		res, err := Analyse(context.Background(), m, Options{}, nil)
		if err != nil {
			t.Fatal(err)
		}
		var msg string
		for _, d := range res.Diagnostics {
			if d.Code == CodeODESteps {
				msg = d.Message
			}
		}
		if (msg != "") != c.want {
			t.Errorf("k in [0, %s]: ode_steps %q, want present %v", c.hi, msg, c.want)
		}
		if c.want && !strings.Contains(msg, "k = 5.47") {
			t.Errorf("k in [0, %s]: the warning does not name the mode at k = 5.47: %q", c.hi, msg)
		}
	}
}
