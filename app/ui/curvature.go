package ui

import (
	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/engine"
)

// CurvatureCard sets the two curvatures the fits invert side by side: the
// negative Hessian at the mode (Laplace) and its average under the
// reverse-KL Gaussian, with the engine's sentence on what the difference
// means.
type CurvatureCard struct {
	app.Compo
	Result *engine.Result
}

// Render draws the two matrices and the sentence.
func (c *CurvatureCard) Render() app.UI {
	r := c.Result
	if r == nil || r.Curvature == nil {
		return app.P().Class("muted").Text("The curvatures appear when both the Laplace and the reverse-KL fit exist.")
	}
	cv := r.Curvature
	return app.Div().Class("curvature").Body(
		app.Div().Class("curv-pair").Body(
			curvatureMatrix("−Hessian of log p at the mode (the Laplace fit's precision)", r.Params, cv.AtMode),
			curvatureMatrix("−E_q[Hessian of log p] at the reverse-KL optimum (its precision)", r.Params, cv.Averaged),
		),
		app.P().ID("bc-curv-summary").Class("curv-summary").Text(cv.Summary),
		app.P().Class("muted").Text("Ratio of averaged to mode curvature over all directions: "+fmtNum(cv.RatioMin)+" to "+fmtNum(cv.RatioMax)+
			"; both on the fitting scale."),
	)
}

func curvatureMatrix(title string, names []string, m [][]float64) app.UI {
	head := []app.UI{app.Th().Scope("col").Text("")}
	for _, n := range names {
		head = append(head, app.Th().Scope("col").Class("mcol").Text(n))
	}
	rows := make([]app.UI, 0, len(m))
	for i := range m {
		name := ""
		if i < len(names) {
			name = names[i]
		}
		cells := []app.UI{app.Th().Scope("row").Class("rlabel").Text(name)}
		for j := range m[i] {
			cells = append(cells, app.Td().Class("num").Text(fmtNum(m[i][j])))
		}
		rows = append(rows, app.Tr().Body(cells...))
	}
	return app.Div().Class("table-scroll curv-matrix").Body(app.Table().Class("results").Body(
		app.Caption().Text(title),
		app.THead().Body(app.Tr().Body(head...)),
		app.TBody().Body(rows...),
	))
}
