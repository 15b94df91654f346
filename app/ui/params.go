package ui

import (
	"math"
	"strconv"
	"strings"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/jsdom"
	"bellcheck/app/plot"
	"bellcheck/engine"
)

// ParamView is what the parameter panel shows for one parameter.
type ParamView struct {
	Name string
	// Lo and Hi are the support from the model.
	Lo, Hi float64
	// Options are the chosen options; File those the model text's own
	// setting lines give (the page's choices override them).
	Options, File engine.ParamOptions
	// Default is the scale the parameter is fitted on where neither names
	// one (engine.ScaleOf).
	Default engine.Scale
	// Used describes the grid of the last result: UsedPoints is 0 before
	// one, and where the result's grid only scouted.
	UsedLo, UsedHi float64
	UsedPoints     int
}

// ParamViews lists the current model's parameters with their options and
// the grid the shown result used.
func ParamViews(s *Session) []ParamView {
	m := s.Model
	if m == nil {
		m = s.LastGood
	}
	if m == nil {
		return nil
	}
	out := make([]ParamView, len(m.Params))
	shown := shownOptions(s)
	for i, p := range m.Params {
		var file engine.ParamOptions
		if i < len(s.File.Params) {
			file = s.File.Params[i]
		}
		// No NaN for "no grid used" (UsedPoints 0 says so): go-app renders
		// the panel again when its inputs differ by reflect.DeepEqual, for
		// which NaN differs from itself, and the panel was rendered again
		// at every update of the page (31 ms of an edit's 216 on the 4-D
		// clock example, chromium's profile).
		v := ParamView{File: file, Name: p.Name, Lo: p.Lo, Hi: p.Hi, Options: s.Param(p.Name), Default: s.defaultScale(m, i)}
		if r := s.Result; r != nil {
			for k, name := range r.Params {
				// A grid that only scouted is not the reference: the
				// fields stay "auto" (a box or points set here make the
				// grid the reference).
				if name == p.Name && !r.Grid.Scouted && k < len(r.Grid.Lo) && k < len(r.Grid.Hi) && k < len(r.Grid.Points) {
					v.UsedLo, v.UsedHi, v.UsedPoints = r.Grid.Lo[k], r.Grid.Hi[k], r.Grid.Points[k]
				}
			}
		}
		if i < len(shown) {
			v.Options = shown[i]
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
	// Stale dims the panel while the text has errors (it shows the last
	// valid model's parameters).
	Stale bool
}

// Render draws one block per parameter: its name and support, then its
// controls, each with a visible label.
func (pp *ParamPanel) Render() app.UI {
	if len(pp.Params) == 0 {
		return app.P().Class("muted").Text("Parameters appear here once the model checks.")
	}
	blocks := make([]app.UI, 0, len(pp.Params))
	for i, p := range pp.Params {
		blocks = append(blocks, pp.block(i, p))
	}
	cls := "params"
	if pp.Stale {
		cls += " stale"
	}
	return app.Div().Class(cls).Body(blocks...)
}

func (pp *ParamPanel) block(i int, p ParamView) app.UI {
	id := "bc-p" + strconv.Itoa(i)
	scales := []struct {
		sc    engine.Scale
		label string
	}{{engine.Identity, "as is"}, {engine.Log, "log"}, {engine.Logit, "logit"}}
	var opts []app.UI
	cur := p.Options.Scale
	if cur == "" {
		cur = p.File.Scale
	}
	def := p.Default
	if def == "" {
		def = engine.Identity
	}
	if cur.Check(p.Lo, p.Hi) != nil || cur == "" {
		cur = def
	}
	for _, s := range scales {
		if s.sc.Check(p.Lo, p.Hi) != nil {
			continue
		}
		opts = append(opts, app.Option().Value(string(s.sc)).Selected(s.sc == cur).Text(s.label))
	}
	name := p.Name
	// Event handlers read the parameter's current name and options through
	// pp.current at event time: go-app keeps the first handler of an element
	// (it compares handlers by code address), so a value captured here would
	// go stale once the panel shows another model.
	pointsPH, loPH, hiPH := "auto", "auto", "auto"
	if p.UsedPoints > 0 {
		pointsPH = strconv.Itoa(p.UsedPoints)
		loPH = plot.FormatNumber(p.UsedLo, 3)
		hiPH = plot.FormatNumber(p.UsedHi, 3)
	}
	pointsVal := ""
	if p.Options.Points > 0 {
		pointsVal = strconv.Itoa(p.Options.Points)
	}
	control := func(fid, label string, input app.UI) app.UI {
		return app.Div().Class("pctl").Title("leave blank to choose automatically; the grey value is the one used").
			Body(app.Label().For(fid).Text(label), input)
	}
	return app.Div().Class("param").Role("group").Aria("labelledby", id+"-name").Body(
		app.Div().Class("param-head").Body(
			app.Span().ID(id+"-name").Class("pname").Text(name),
			app.Span().Class("support").Body(app.Span().Class("muted").Text("support "), app.Span().Class("mono").Text(supportText(p.Lo, p.Hi))),
		),
		app.Div().Class("param-controls").Body(
			app.Div().Class("pctl").Body(app.Label().For(id+"-scale").Text("fit on scale"),
				app.Select().ID(id+"-scale").Disabled(len(opts) < 2).Title(scaleTitle(len(opts), def)).Body(opts...).
					OnChange(func(ctx app.Context, e app.Event) {
						name, o, ok := pp.current(i)
						v, err := jsdom.Value(id + "-scale")
						if !ok || err != nil {
							return
						}
						o.Scale = engine.Scale(v)
						pp.Host.SetParam(ctx, name, o)
					})),
			control(id+"-points", "grid points",
				app.Input().ID(id+"-points").Type("number").Min(MinPoints).Max(MaxPoints).Step(1).
					Class("num-input").Placeholder(pointsPH).Value(pointsVal).
					OnChange(func(ctx app.Context, e app.Event) {
						name, o, ok := pp.current(i)
						v, err := jsdom.Value(id + "-points")
						if !ok || err != nil {
							return
						}
						n, err := strconv.Atoi(strings.TrimSpace(v))
						if err != nil || n <= 0 {
							n = 0
						}
						o.Points = n
						pp.Host.SetParam(ctx, name, o)
					})),
			control(id+"-lo", "grid from", pp.boundInput(i, id+"-lo", loPH, p.Options.Lo, false)),
			control(id+"-hi", "grid to", pp.boundInput(i, id+"-hi", hiPH, p.Options.Hi, true)),
		),
	)
}

func scaleTitle(n int, def engine.Scale) string {
	if n < 2 {
		return "log and logit scales need a bounded support, such as param s in [0, inf]"
	}
	name := string(def)
	if def == engine.Identity {
		name = "as is"
	}
	return "the scale on which the Gaussian fits are made (by default " + name + ")"
}

// current returns the name and options of the i-th parameter as the panel
// shows them now.
func (pp *ParamPanel) current(i int) (string, engine.ParamOptions, bool) {
	if i < 0 || i >= len(pp.Params) {
		return "", engine.ParamOptions{}, false
	}
	return pp.Params[i].Name, pp.Params[i].Options, true
}

// boundInput is a text input for the i-th parameter's optional lower (or,
// with upper, upper) grid bound; blank means automatic.
func (pp *ParamPanel) boundInput(i int, id, placeholder string, v *float64, upper bool) app.UI {
	set := func(ctx app.Context, v *float64) {
		name, o, ok := pp.current(i)
		if !ok {
			return
		}
		if upper {
			o.Hi = v
		} else {
			o.Lo = v
		}
		pp.Host.SetParam(ctx, name, o)
	}
	val := ""
	if v != nil {
		val = strconv.FormatFloat(*v, 'g', -1, 64)
	}
	return app.Input().ID(id).Type("text").Attr("inputmode", "decimal").Class("num-input").
		Placeholder(placeholder).Value(val).
		OnChange(func(ctx app.Context, e app.Event) {
			raw, err := jsdom.Value(id)
			if err != nil {
				return
			}
			s := strings.ReplaceAll(strings.TrimSpace(raw), "−", "-")
			if s == "" {
				set(ctx, nil)
				return
			}
			x, err := strconv.ParseFloat(s, 64)
			if err != nil || math.IsNaN(x) || math.IsInf(x, 0) {
				_ = jsdom.SetValidity(id, "not a number: leave blank for automatic")
				set(ctx, nil)
				return
			}
			_ = jsdom.SetValidity(id, "")
			set(ctx, &x)
		})
}

// resultScale returns the fitting scale of parameter k in a result.
func resultScale(r *engine.Result, k int) engine.Scale {
	if k < len(r.Scales) {
		return r.Scales[k]
	}
	return engine.Identity
}
