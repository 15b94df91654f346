package ui

import (
	"maps"
	"math"
	"slices"
	"strconv"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/figure"
	"bellcheck/app/jsdom"
	"bellcheck/app/plot"
	"bellcheck/app/share"
	"bellcheck/engine"
	"bellcheck/engine/data"
	"bellcheck/engine/model"
)

// Axes are plot ranges held while a constant moves, so that successive
// results can be compared by eye: each parameter's range, by index, and
// the density axis of a single parameter's marginal.
type Axes struct {
	Params  []string
	Ranges  [][2]float64
	Density [2]float64
}

// fits reports whether the held axes belong to a result of these
// parameters.
func (a *Axes) fits(params []string) bool {
	if a == nil || len(a.Params) != len(params) || len(a.Ranges) != len(params) {
		return false
	}
	for i, p := range params {
		if a.Params[i] != p {
			return false
		}
	}
	return true
}

// apply fixes a figure's ranges to the held ones (x and y name the
// parameters across and up; y is "" for a marginal).
func (a *Axes) apply(o *figure.Options, params []string, x, y string) {
	if !a.fits(params) {
		return
	}
	for i, n := range params {
		if n == x {
			o.XView = a.Ranges[i]
		}
		if y != "" && n == y {
			o.YView = a.Ranges[i]
		}
	}
	if y == "" && len(params) == 1 {
		o.YView = a.Density
	}
}

// axesOf returns the ranges a figure set shows now.
func axesOf(fs *FigureSet) *Axes {
	if fs == nil {
		return nil
	}
	a := &Axes{Params: fs.Names, Ranges: make([][2]float64, fs.Dim)}
	switch {
	case fs.Main != nil && fs.Dim == 1:
		f := fs.Main.Fig
		a.Ranges[0] = [2]float64{f.X.D0, f.X.D1}
		a.Density = [2]float64{f.Y.D0, f.Y.D1}
	case fs.Main != nil && fs.Dim == 2:
		f := fs.Main.Fig
		a.Ranges[0] = [2]float64{f.X.D0, f.X.D1}
		a.Ranges[1] = [2]float64{f.Y.D0, f.Y.D1}
	case fs.Grid != nil:
		for i := range fs.Dim {
			if i < len(fs.Grid) && i < len(fs.Grid[i]) && fs.Grid[i][i] != nil {
				f := fs.Grid[i][i].Fig
				a.Ranges[i] = [2]float64{f.X.D0, f.X.D1}
			}
		}
	default:
		return nil
	}
	return a
}

// sliderStep is a slider's step: a power of ten giving at least 200
// steps over [lo, hi], so round values such as the ends of a decade are
// reachable.
func sliderStep(lo, hi float64) float64 {
	return math.Pow(10, math.Floor(math.Log10((hi-lo)/200)))
}

// LiveHost is what the live constants report to: the page implements it.
type LiveHost interface {
	// SetConstant analyses the model with the i-th live constant set to v,
	// cancelling the analysis under way.
	SetConstant(ctx app.Context, i int, v float64)
	// HoldAxes keeps (or frees) the plots' ranges.
	HoldAxes(ctx app.Context, on bool)
	// PinResult keeps (or drops) the result shown now as a faint overlay.
	PinResult(ctx app.Context, on bool)
}

// LiveItem is a constant marked with #@ vary, as its slider shows it.
type LiveItem struct {
	Name          string
	Lo, Hi, Value float64
	// FromText is the value the model text gives.
	FromText float64
}

// LivePanel shows a slider per live constant and the "hold axes" toggle.
type LivePanel struct {
	app.Compo
	Host  LiveHost
	Items []LiveItem
	Hold  bool
	Pin   bool
}

// Render draws the sliders.
func (l *LivePanel) Render() app.UI {
	if len(l.Items) == 0 {
		return app.Div().Class("live empty")
	}
	rows := make([]app.UI, 0, len(l.Items)+1)
	for i, it := range l.Items {
		id := "bc-live-" + strconv.Itoa(i)
		rows = append(rows, app.Div().Class("live-row").Body(
			app.Label().For(id).Class("mono").Text(it.Name),
			app.Input().Type("range").ID(id).Class("live-slider").
				Min(plot.FormatNumber(it.Lo, 8)).Max(plot.FormatNumber(it.Hi, 8)).
				Step(sliderStep(it.Lo, it.Hi)).Value(strconv.FormatFloat(it.Value, 'g', -1, 64)).
				OnInput(func(ctx app.Context, e app.Event) {
					raw, err := jsdom.Value(id)
					if err != nil {
						return
					}
					v, err := strconv.ParseFloat(raw, 64)
					if err != nil {
						return
					}
					l.Host.SetConstant(ctx, i, v)
					// Only the slider's label changes until the analysis's
					// result arrives: an input event would otherwise render
					// the whole page again (go-app updates the handler's
					// component and every ancestor), 100 ms and more on a
					// drag's every input, which starved the analysis.
					if jsdom.SetText(id+"-value", plot.FormatNumber(v, 4)) == nil {
						ctx.PreventUpdate()
					}
				}),
			app.Span().ID(id+"-value").Class("live-value mono").Text(plot.FormatNumber(it.Value, 4)),
		))
	}
	rows = append(rows, app.Label().For("bc-hold").Class("live-hold").Body(
		app.Input().Type("checkbox").ID("bc-hold").Checked(l.Hold).
			OnChange(func(ctx app.Context, e app.Event) {
				on, err := jsdom.Checked("bc-hold")
				if err != nil {
					return
				}
				l.Host.HoldAxes(ctx, on)
			}),
		app.Span().Text("hold the plots' axes"),
	), app.Label().For("bc-pin").Class("live-hold").Body(
		app.Input().Type("checkbox").ID("bc-pin").Checked(l.Pin).
			OnChange(func(ctx app.Context, e app.Event) {
				on, err := jsdom.Checked("bc-pin")
				if err != nil {
					return
				}
				l.Host.PinResult(ctx, on)
			}),
		app.Span().Text("pin this result (a faint outline under the next ones)"),
	))
	return app.Div().Class("live").Body(
		append([]app.UI{app.P().Class("muted live-note").Text("Constants marked with #@ vary: moving one analyses again at once (the newest value wins).")}, rows...)...)
}

// liveCard is the sliders' card, when the model has live constants.
func (p *Page) liveCard() app.UI {
	items := p.s.liveItems()
	if len(items) == 0 {
		return app.Text("")
	}
	return card("Live constants", "bc-h-live", &LivePanel{Host: p, Items: items, Hold: p.view.Hold != nil, Pin: p.view.Pin != nil})
}

// liveItems lists the current model's live constants with their values.
func (s *Session) liveItems() []LiveItem {
	m := s.Model
	if m == nil {
		m = s.LastGood
	}
	if m == nil {
		return nil
	}
	var out []LiveItem
	for _, v := range s.File.Vary {
		base, err := m.Constant(v.Name)
		if err != nil {
			continue
		}
		val := base
		if x, ok := s.Constants[v.Name]; ok {
			val = x
		}
		out = append(out, LiveItem{Name: v.Name, Lo: v.Lo, Hi: v.Hi, Value: val, FromText: base})
	}
	return out
}

// runModel is the model an analysis runs: the checked model with the live
// constants the sliders set.
func (s *Session) runModel() *model.Model {
	return withConstants(s.Model, s.File.Vary, s.Constants)
}

// withConstants returns m with the live constants of vary set to the
// values given (by name); those without a value keep the text's.
func withConstants(m *model.Model, vary []engine.Vary, values map[string]float64) *model.Model {
	for _, v := range vary {
		x, ok := values[v.Name]
		if !ok || m == nil {
			continue
		}
		if mm, err := model.WithConstant(m, v.Name, x); err == nil {
			m = mm
		}
	}
	return m
}

// SetConstant implements LiveHost.
func (p *Page) SetConstant(ctx app.Context, i int, v float64) {
	items := p.s.liveItems()
	if i < 0 || i >= len(items) {
		return
	}
	if p.s.Constants == nil {
		p.s.Constants = map[string]float64{}
	}
	p.s.Constants[items[i].Name] = v
	p.persistSoon(ctx) // the link and the saved work keep the value (once the sliding pauses)
	if p.s.Model != nil && !p.pending {
		if p.s.Running {
			// The running analysis finishes and is drawn; the newest
			// value is analysed next (runner.sliderPending).
			p.sliderPending = true
			return
		}
		p.start(ctx)
	}
}

// movedConstants returns the values the sliders set for the model's live
// constants, by name, for a link and the saved work (nil for none).
func (s *Session) movedConstants() map[string]float64 {
	var out map[string]float64
	for _, v := range s.File.Vary {
		if x, ok := s.Constants[v.Name]; ok {
			if out == nil {
				out = map[string]float64{}
			}
			out[v.Name] = x
		}
	}
	return out
}

// restoreConstants sets the live constants' values a link or the saved
// work carries, after its text was checked: only those of constants the
// text marks to vary, within their ranges (a value outside is brought to
// the nearer end, as the slider would show it).
func (s *Session) restoreConstants(vals map[string]float64) {
	s.Constants = nil
	if s.Model == nil {
		return
	}
	for _, v := range s.File.Vary {
		x, ok := vals[v.Name]
		if !ok || math.IsNaN(x) {
			continue
		}
		if s.Constants == nil {
			s.Constants = map[string]float64{}
		}
		s.Constants[v.Name] = max(v.Lo, min(v.Hi, x))
	}
}

// HoldAxes implements LiveHost.
func (p *Page) HoldAxes(ctx app.Context, on bool) {
	p.view.Hold = nil
	if on {
		p.view.Hold = axesOf(p.figs)
	}
	p.figs = numbered(BuildFigures(p.s.Result, p.view))
}

// pinInto gives a figure the pinned result's exact density of the same
// parameters (x across, y up; "" for a marginal), when pin is a result of
// the same parameters.
func pinInto(o *figure.Options, pin *engine.Result, params []string, x, y string) {
	if pin == nil || pin.Plots == nil || len(pin.Params) != len(params) {
		return
	}
	for i, n := range params {
		if pin.Params[i] != n {
			return
		}
	}
	i, j := slices.Index(params, x), slices.Index(params, y)
	if y == "" {
		for k := range pin.Plots.Marginals {
			if pin.Plots.Marginals[k].Param == i {
				o.PinnedMarginal = &pin.Plots.Marginals[k]
			}
		}
		return
	}
	for k := range pin.Plots.Pairs {
		if p := &pin.Plots.Pairs[k]; p.I == i && p.J == j {
			o.PinnedPair = p
		}
	}
}

// PinResult implements LiveHost.
func (p *Page) PinResult(ctx app.Context, on bool) {
	p.view.Pin = nil
	if on {
		p.view.Pin = p.s.Result
	}
	p.figs = numbered(BuildFigures(p.s.Result, p.view))
}

// constantProblems says, in words, which of a link's sliders' values the
// page sets otherwise (restoreConstants): a constant the text does not mark
// to vary, or a value beyond its range. A text with errors gives none.
func constantProblems(st share.State) []string {
	if len(st.Constants) == 0 {
		return nil
	}
	var tb *data.Table
	if st.Data != "" {
		tb, _ = data.Parse(st.Data)
	}
	m, file, errs := parseModel(st.Model, tb)
	if m == nil || errs != nil {
		return nil
	}
	ranges := map[string]engine.Vary{}
	for _, v := range file.Vary {
		ranges[v.Name] = v
	}
	var out []string
	for _, name := range slices.Sorted(maps.Keys(st.Constants)) {
		x := st.Constants[name]
		v, ok := ranges[name]
		switch {
		case !ok:
			out = append(out, "the value "+plainNum(x)+" for "+model.Visible(name)+", which the model does not mark with #@ vary (ignored)")
		case x < v.Lo || x > v.Hi:
			out = append(out, "the value "+plainNum(x)+" for "+name+", outside its range "+plainNum(v.Lo)+" to "+plainNum(v.Hi)+" (set to the nearer end)")
		}
	}
	return out
}

// plainNum writes a number as typed: the shortest form that reads back.
func plainNum(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }
