package ui

import (
	"strconv"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/jsdom"
	"bellcheck/engine"
)

// shownOptions returns the options the parameter fields show for the
// current model: the user's choices as the analysis uses them (a box side
// clipped to the support, a box whose start is not below its end dropped),
// so a field never holds a value the analysis does not use.
func shownOptions(s *Session) []engine.ParamOptions {
	if s.Model == nil {
		return nil
	}
	eff := s.Options().Params
	out := make([]engine.ParamOptions, len(s.Model.Params))
	for i, p := range s.Model.Params {
		c := s.Param(p.Name)
		if i >= len(eff) {
			continue
		}
		if c.Points != 0 {
			c.Points = eff[i].Points
		}
		if c.Lo != nil {
			c.Lo = eff[i].Lo
		}
		if c.Hi != nil {
			c.Hi = eff[i].Hi
		}
		out[i] = c
	}
	return out
}

// syncParamFields writes the options the analysis uses into the parameter
// fields once the page has rendered. go-app leaves an input alone when its
// rendered value does not change, so a value typed for another model's
// parameter (or one the analysis dropped) would otherwise stay in the
// field while the analysis uses an automatic box.
func (p *Page) syncParamFields(ctx app.Context) {
	opts := shownOptions(&p.s)
	ctx.Defer(func(app.Context) {
		for i, o := range opts {
			id := "bc-p" + strconv.Itoa(i)
			pts := ""
			if o.Points > 0 {
				pts = strconv.Itoa(o.Points)
			}
			_ = jsdom.SetValue(id+"-points", pts)
			_ = jsdom.SetValue(id+"-lo", boundText(o.Lo))
			_ = jsdom.SetValue(id+"-hi", boundText(o.Hi))
		}
	})
}

func boundText(v *float64) string {
	if v == nil {
		return ""
	}
	return strconv.FormatFloat(*v, 'g', -1, 64)
}
