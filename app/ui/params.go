package ui

import (
	"math"
	"strconv"
	"strings"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/plot"
	"bellcheck/engine"
	"bellcheck/engine/model"
)

// ParamView is what the parameter panel shows for one parameter.
type ParamView struct {
	Name string
	// Lo and Hi are the support from the model.
	Lo, Hi float64
	// Options are the chosen options.
	Options engine.ParamOptions
	// Used describes the grid of the last result ("" before one).
	UsedLo, UsedHi float64
	UsedPoints     int
}

// ParamViews lists the current model's parameters with their options and
// the grid the shown result used.
func ParamViews(s *Session) []ParamView {
	if s.Model == nil {
		return nil
	}
	out := make([]ParamView, len(s.Model.Params))
	for i, p := range s.Model.Params {
		v := ParamView{Name: p.Name, Lo: p.Lo, Hi: p.Hi, Options: s.Param(p.Name), UsedLo: math.NaN(), UsedHi: math.NaN()}
		if r := s.Result; r != nil {
			for k, name := range r.Params {
				if name == p.Name && k < len(r.Grid.Lo) && k < len(r.Grid.Hi) && k < len(r.Grid.Points) {
					v.UsedLo, v.UsedHi, v.UsedPoints = r.Grid.Lo[k], r.Grid.Hi[k], r.Grid.Points[k]
				}
			}
		}
		out[i] = v
	}
	return out
}

// supportText writes a support as an interval.
func supportText(lo, hi float64) string {
	l, r := "[", "]"
	if math.IsInf(lo, -1) {
		l = "("
	}
	if math.IsInf(hi, 1) {
		r = ")"
	}
	return l + plot.FormatNumber(lo, 4) + ", " + plot.FormatNumber(hi, 4) + r
}

// ParamPanel shows each parameter's support and lets the user choose its
// fitting scale, grid points and grid range.
type ParamPanel struct {
	app.Compo
	Host   Host
	Params []ParamView
}

// Render draws the panel as a table of labelled controls.
func (pp *ParamPanel) Render() app.UI {
	if len(pp.Params) == 0 {
		return app.P().Class("muted").Text("Parameters appear here once the model checks.")
	}
	rows := make([]app.UI, 0, len(pp.Params))
	for i, p := range pp.Params {
		rows = append(rows, pp.row(i, p))
	}
	return app.Table().Class("params").Body(
		app.Caption().Class("sr-only").Text("Parameters and their analysis settings"),
		app.THead().Body(app.Tr().Body(
			app.Th().Scope("col").Text("parameter"),
			app.Th().Scope("col").Text("support"),
			app.Th().Scope("col").Text("fit on scale"),
			app.Th().Scope("col").Text("grid points"),
			app.Th().Scope("col").Text("grid from"),
			app.Th().Scope("col").Text("grid to"),
		)),
		app.TBody().Body(rows...),
	)
}

func (pp *ParamPanel) row(i int, p ParamView) app.UI {
	id := "bc-p" + strconv.Itoa(i)
	mp := model.Param{Name: p.Name, Lo: p.Lo, Hi: p.Hi}
	scales := []struct {
		sc    engine.Scale
		label string
	}{{engine.Identity, "as is"}, {engine.Log, "log"}, {engine.Logit, "logit"}}
	var opts []app.UI
	cur := p.Options.Scale
	if cur == "" || !ScaleAllowed(mp, cur) {
		cur = engine.Identity
	}
	for _, s := range scales {
		if !ScaleAllowed(mp, s.sc) {
			continue
		}
		opts = append(opts, app.Option().Value(string(s.sc)).Selected(s.sc == cur).Text(s.label))
	}
	name := p.Name
	pointsPH, loPH, hiPH := "auto", "auto", "auto"
	if p.UsedPoints > 0 {
		pointsPH = "auto (" + strconv.Itoa(p.UsedPoints) + ")"
		loPH = "auto (" + plot.FormatNumber(p.UsedLo, 3) + ")"
		hiPH = "auto (" + plot.FormatNumber(p.UsedHi, 3) + ")"
	}
	pointsVal := ""
	if p.Options.Points > 0 {
		pointsVal = strconv.Itoa(p.Options.Points)
	}
	return app.Tr().Body(
		app.Th().Scope("row").Class("pname").Text(name),
		app.Td().Class("num").Text(supportText(p.Lo, p.Hi)),
		app.Td().Body(
			app.Label().For(id+"-scale").Class("sr-only").Text("fitting scale of "+name),
			app.Select().ID(id+"-scale").Disabled(len(opts) < 2).Body(opts...).
				OnChange(func(ctx app.Context, e app.Event) {
					o := p.Options
					o.Scale = engine.Scale(ctx.JSSrc().Get("value").String())
					pp.Host.SetParam(ctx, name, o)
				}),
		),
		app.Td().Body(
			app.Label().For(id+"-points").Class("sr-only").Text("grid points of "+name),
			app.Input().ID(id+"-points").Type("number").Min(MinPoints).Max(MaxPoints).Step(1).
				Class("num-input").Placeholder(pointsPH).Value(pointsVal).
				OnChange(func(ctx app.Context, e app.Event) {
					o := p.Options
					n, err := strconv.Atoi(strings.TrimSpace(ctx.JSSrc().Get("value").String()))
					if err != nil || n <= 0 {
						n = 0
					}
					o.Points = n
					pp.Host.SetParam(ctx, name, o)
				}),
		),
		app.Td().Body(boundInput(id+"-lo", "grid lower end of "+name, loPH, p.Options.Lo, func(ctx app.Context, v *float64) {
			o := p.Options
			o.Lo = v
			pp.Host.SetParam(ctx, name, o)
		})),
		app.Td().Body(boundInput(id+"-hi", "grid upper end of "+name, hiPH, p.Options.Hi, func(ctx app.Context, v *float64) {
			o := p.Options
			o.Hi = v
			pp.Host.SetParam(ctx, name, o)
		})),
	)
}

// boundInput is a text input for an optional number; blank means automatic.
func boundInput(id, label, placeholder string, v *float64, set func(app.Context, *float64)) app.UI {
	val := ""
	if v != nil {
		val = strconv.FormatFloat(*v, 'g', -1, 64)
	}
	return app.Div().Body(
		app.Label().For(id).Class("sr-only").Text(label),
		app.Input().ID(id).Type("text").Attr("inputmode", "decimal").Class("num-input").
			Placeholder(placeholder).Value(val).
			OnChange(func(ctx app.Context, e app.Event) {
				s := strings.TrimSpace(ctx.JSSrc().Get("value").String())
				s = strings.ReplaceAll(s, "−", "-")
				if s == "" {
					set(ctx, nil)
					return
				}
				x, err := strconv.ParseFloat(s, 64)
				if err != nil || math.IsNaN(x) || math.IsInf(x, 0) {
					set(ctx, nil)
					return
				}
				set(ctx, &x)
			}),
	)
}
