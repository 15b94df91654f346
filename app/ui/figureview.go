package ui

import (
	"strconv"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/jsdom"
)

// FigureView shows one panel: the heat map's canvas, the SVG above it, and a
// cross-hair with a read-out of the data under the pointer or the keyboard
// cursor (arrow keys move it; Shift moves ten points).
type FigureView struct {
	app.Compo
	Panel *Panel
	// Caption describes the panel for screen readers and under the plot.
	Caption string
	// Compact marks a cell of the pair grid.
	Compact bool

	active      bool
	ix, iy      int
	cx, cy      float64
	readout     string
	paintedHeat *Panel
}

// OnMount paints the heat map once the canvas exists.
func (v *FigureView) OnMount(ctx app.Context) {
	ctx.Defer(v.paint)
}

// OnUpdate repaints when the panel changes.
func (v *FigureView) OnUpdate(ctx app.Context) {
	v.active = false
	ctx.Defer(v.paint)
}

func (v *FigureView) paint(ctx app.Context) {
	p := v.Panel
	if p == nil || p.Fig == nil || p.Fig.Heat == nil || v.paintedHeat == p {
		return
	}
	h := p.Fig.Heat
	if err := jsdom.DrawRGBA(p.ID+"-heat", h.Width, h.Height, h.Pixels); err == nil {
		v.paintedHeat = p
	}
}

// Render draws the layers.
func (v *FigureView) Render() app.UI {
	p := v.Panel
	if p == nil || p.Fig == nil {
		return app.Div().Class("fig-empty muted").Text("nothing to draw")
	}
	f := p.Fig
	pct := func(a, total float64) string { return strconv.FormatFloat(100*a/total, 'f', 3, 64) + "%" }
	layers := []app.UI{}
	if h := f.Heat; h != nil {
		layers = append(layers, app.Canvas().ID(p.ID+"-heat").Class("heat").
			Width(h.Width).Height(h.Height).Aria("hidden", "true").
			Style("left", pct(h.Box.X0, f.W)).Style("top", pct(h.Box.Y0, f.H)).
			Style("width", pct(h.Box.W(), f.W)).Style("height", pct(h.Box.H(), f.H)))
	}
	layers = append(layers, app.Raw(f.SVG))
	if v.active {
		layers = append(layers,
			app.Div().Class("xhair-v").Style("left", pct(v.cx, f.W)).Style("top", pct(f.Plot.Y0, f.H)).Style("height", pct(f.Plot.H(), f.H)),
		)
		if p.P != nil {
			layers = append(layers,
				app.Div().Class("xhair-h").Style("top", pct(v.cy, f.H)).Style("left", pct(f.Plot.X0, f.W)).Style("width", pct(f.Plot.W(), f.W)))
		}
		layers = append(layers, app.Div().Class("xhair-dot").Style("left", pct(v.cx, f.W)).Style("top", pct(v.cy, f.H)))
	}
	cls := "figure"
	if v.Compact {
		cls += " compact"
	}
	readout := v.readout
	if !v.active {
		readout = ""
	}
	return app.Figure().Class(cls).Body(
		app.Div().ID(p.ID).Class("fig-stack").
			Style("aspect-ratio", strconv.FormatFloat(f.W, 'f', 0, 64)+" / "+strconv.FormatFloat(f.H, 'f', 0, 64)).
			TabIndex(0).
			Role("group").
			Aria("roledescription", "plot").
			Aria("label", v.Caption+" Arrow keys move a read-out cursor; Shift moves ten grid points.").
			OnMouseMove(v.onMove).
			OnMouseLeave(v.onLeave).
			OnKeyDown(v.onKey).
			OnBlur(v.onLeave).
			Body(layers...),
		app.FigCaption().Class("readout").Attr("aria-live", "polite").Body(
			app.If(readout != "", func() app.UI { return app.Text(readout) }).
				Else(func() app.UI {
					return app.Span().Class("muted").Text(v.Caption)
				}),
		),
	)
}

func (v *FigureView) onMove(ctx app.Context, e app.Event) {
	p := v.Panel
	if p == nil || p.Fig == nil {
		return
	}
	cx, cy := e.Get("clientX"), e.Get("clientY")
	if cx.Type() != app.TypeNumber || cy.Type() != app.TypeNumber {
		return
	}
	r, err := jsdom.BoundingRect(p.ID)
	if err != nil || r.Width <= 0 || r.Height <= 0 {
		return
	}
	vx := (cx.Float() - r.X) / r.Width * p.Fig.W
	vy := (cy.Float() - r.Y) / r.Height * p.Fig.H
	x, y := p.Fig.X.Invert(vx), p.Fig.Y.Invert(vy)
	text, px, py, ok := p.ReadOut(vx, vy)
	if !ok {
		if v.active {
			v.active = false
		} else {
			ctx.PreventUpdate()
		}
		return
	}
	v.ix, v.iy = p.Nearest(x, y)
	v.show(text, px, py)
}

func (v *FigureView) show(text string, px, py float64) {
	v.active, v.readout, v.cx, v.cy = true, text, px, py
}

func (v *FigureView) onLeave(ctx app.Context, e app.Event) {
	v.active = false
}

func (v *FigureView) onKey(ctx app.Context, e app.Event) {
	p := v.Panel
	if p == nil {
		return
	}
	key := e.Get("key")
	if key.Type() != app.TypeString {
		return
	}
	step := 1
	if s := e.Get("shiftKey"); s.Type() == app.TypeBoolean && s.Bool() {
		step = 10
	}
	nx, ny := p.GridSize()
	if !v.active {
		// Start at the middle of the view, where the mass is.
		f := p.Fig
		v.ix, v.iy = p.Nearest(f.X.Invert((f.Plot.X0+f.Plot.X1)/2), f.Y.Invert((f.Plot.Y0+f.Plot.Y1)/2))
	}
	switch key.String() {
	case "ArrowLeft":
		v.ix -= step
	case "ArrowRight":
		v.ix += step
	case "ArrowUp":
		v.iy += step
	case "ArrowDown":
		v.iy -= step
	case "Escape":
		v.active = false
		return
	default:
		ctx.PreventUpdate()
		return
	}
	e.PreventDefault()
	v.ix = max(0, min(v.ix, nx-1))
	if ny > 0 {
		v.iy = max(0, min(v.iy, ny-1))
	} else {
		v.iy = 0
	}
	if text, px, py, ok := p.ReadOutIndex(v.ix, v.iy); ok {
		v.show(text, px, py)
	}
}
