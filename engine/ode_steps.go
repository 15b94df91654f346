package engine

import (
	"fmt"
	"math"

	"bellcheck/engine/eval"
	"bellcheck/engine/fit"
	"bellcheck/engine/model"
)

// odeStepTol bounds how far the change of log p between the points
// checkODESteps looks at may spread when the ode blocks take twice their
// substeps: beyond it the shape of the posterior depends on the step. A
// change common to every point only shifts log Z's constant; 0.1 in log
// p is a tenth of the density's factor e between the points (our choice).
const odeStepTol = 0.1

// checkODESteps compares the model's log-density with the same model whose
// ode blocks take twice their Runge-Kutta substeps (model.WithSubsteps), at
// each mode and two sds (from the curvature) either side of the highest
// along each axis: the difference is about the integration's error there
// (the classical Runge-Kutta method's error falls 16 times with the step
// halved). Where it spreads over more than odeStepTol between the points,
// the posterior's shape depends on the step: a warning names the point
// most affected. A step too coarse for the system's rates can make a
// mode of its own: a cooling curve's decay rate fitted with four substeps
// between readings two time units apart had a second mode at k = 5.5
// (k h = 2.7, where the method's factor per step, 0.93, mimics the true
// decay's), holding 40 % of the mass. A model without an ode block, or
// whose doubled blocks would pass the evaluator's size limit, is not
// checked.
func (a *analysis) checkODESteps() {
	if len(a.modes.fitModes) == 0 {
		return
	}
	m2, ok := model.WithSubsteps(a.m, 2)
	if !ok {
		return
	}
	// The second compilation takes tens of milliseconds natively, with no
	// pause inside: the page may pause just before and after it.
	a.tr.beat()
	ev2, err := eval.Compile(m2)
	a.tr.beat()
	if err != nil {
		return
	}
	d := a.d
	var points [][]float64 // on the fitting scale
	for _, m := range a.modes.fitModes {
		points = append(points, m.X)
	}
	if lap, err := fit.Laplace(a.modes.fitModes[0]); err == nil {
		top := a.modes.fitModes[0].X
		for k := 0; k < d; k++ {
			sd := math.Sqrt(lap.Cov.At(k, k))
			for _, side := range [2]float64{-2, 2} {
				z := append([]float64(nil), top...)
				z[k] += side * sd
				points = append(points, z)
			}
		}
	}
	x := make([]float64, d)
	change := make([]float64, len(points))
	for i, z := range points {
		for k := range z {
			x[k] = a.maps[k].ToOriginal(z[k])
		}
		change[i] = math.NaN()
		l1 := a.ev.LogDensity(x)
		if math.IsNaN(l1) || math.IsInf(l1, 0) {
			continue // no mass there
		}
		change[i] = ev2.LogDensity(x) - l1
		if math.IsNaN(change[i]) {
			change[i] = math.Inf(-1) // the finer trajectory breaks down
		}
	}
	// The point whose change differs most from the highest mode's.
	far, spread := -1, 0.0
	for i := 1; i < len(points); i++ {
		if math.IsNaN(change[i]) || math.IsNaN(change[0]) {
			continue
		}
		dv := math.Abs(change[i] - change[0])
		if math.IsNaN(dv) {
			dv = math.Inf(1) // both broke down
		}
		if far < 0 || dv > spread {
			far, spread = i, dv
		}
	}
	if far < 0 || !(spread > odeStepTol) {
		return
	}
	where := "a point two sds from it"
	if far < len(a.modes.fitModes) {
		where = "another mode"
	}
	a.diag.add(CodeODESteps, SeverityWarning,
		"The ode block's trajectory depends on its step: with twice the substeps, log p changes by %s at the highest mode (%s) and by %s at %s (%s). The Runge-Kutta steps are too coarse for the system's rates there, so the results follow the step rather than the equations, and a mode there may be an artefact of the step (where a rate has no upper bound, such a mode moves with the step instead of going away). Raise the block's substeps until the results stop changing, or give the rates a prior that keeps them where the step resolves them.",
		stepChange(change[0]), a.pointString(points[0]), stepChange(change[far]), where, a.pointString(points[far]))
}

// stepChange writes a change of log p for the ode_steps sentence.
func stepChange(v float64) string {
	if math.IsInf(v, 0) {
		return "an infinite amount (the finer trajectory breaks down)"
	}
	return fmt.Sprintf("%.3g", v)
}
