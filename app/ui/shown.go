package ui

import (
	"bytes"
	"slices"
	"sync/atomic"

	"bellcheck/engine"
	"bellcheck/engine/model"
)

// Shown is a result as the page shows it, prepared once per result (and
// per view of the plots): the result and the model it is for, its figures
// and its table.
//
// go-app re-renders a component when one of its inputs differs from the
// last render's by reflect.DeepEqual, which walks pointers: given a result
// it would walk the whole result at every render of the page. Serial comes
// first and numbers the versions, so two versions differ at the first field
// and the same version is the same pointer: the components that take a
// *Shown compare it in constant time and render again only on a new result.
type Shown struct {
	Serial   uint64
	Result   *engine.Result
	Model    *model.Model
	Figures  *FigureSet
	Sections []Section
}

// serials numbers Shown values, figure sets and panels.
var serials atomic.Uint64

// nextSerial returns a new serial number.
func nextSerial() uint64 { return serials.Add(1) }

// numbered gives a figure set and its panels new serial numbers, and
// returns it.
func numbered(fs *FigureSet) *FigureSet {
	if fs == nil {
		return nil
	}
	fs.Serial = nextSerial()
	for _, pn := range panelsOf(fs) {
		pn.Serial = nextSerial()
	}
	return fs
}

// keepDrawn returns fs with each panel whose drawing is the same as that of
// the panel in its place in drawn (the set on the page) replaced by the
// drawn panel, given fs's data for the read-out: the page then neither
// parses its SVG again nor repaints its canvas. The final result of an
// analysis that showed an early one redraws only its pairs, and an edit
// that leaves the result as it was (a comment) redraws nothing.
func keepDrawn(drawn, fs *FigureSet) *FigureSet {
	if drawn == nil || fs == nil || drawn.Dim != fs.Dim || !slices.Equal(drawn.Names, fs.Names) {
		return fs
	}
	keep := func(old, pn *Panel) *Panel {
		if old == nil || pn == nil || !sameDrawing(old, pn) {
			return pn
		}
		old.M, old.P = pn.M, pn.P
		return old
	}
	fs.Main = keep(drawn.Main, fs.Main)
	for r, row := range fs.Grid {
		for c := range row {
			if r < len(drawn.Grid) && c < len(drawn.Grid[r]) {
				row[c] = keep(drawn.Grid[r][c], row[c])
			}
		}
	}
	return fs
}

// sameDrawing reports whether two panels draw the same picture in the same
// place.
func sameDrawing(a, b *Panel) bool {
	if a.ID != b.ID || a.I != b.I || a.J != b.J || a.Log != b.Log || !slices.Equal(a.Names, b.Names) || (a.Fig == nil) != (b.Fig == nil) {
		return false
	}
	if a.Fig == nil {
		return true
	}
	fa, fb := a.Fig, b.Fig
	if fa.SVG != fb.SVG || fa.W != fb.W || fa.H != fb.H || fa.Plot != fb.Plot || fa.X != fb.X || fa.Y != fb.Y || (fa.Heat == nil) != (fb.Heat == nil) {
		return false
	}
	return fa.Heat == nil || fa.Heat.Width == fb.Heat.Width && fa.Heat.Height == fb.Heat.Height && fa.Heat.Box == fb.Heat.Box && bytes.Equal(fa.Heat.Pixels, fb.Heat.Pixels)
}

// shown returns the result shown now, as one Shown value that stays the same
// pointer while the result, its figures and its table do ("nil" without a
// result).
func (p *Page) shown() *Shown {
	r := p.s.Result
	if r == nil {
		p.lastShown = nil
		return nil
	}
	if c := p.lastShown; c != nil && c.Result == r && c.Model == p.s.ResultModel && c.Figures == p.figs && sameSections(c.Sections, p.sections) {
		return c
	}
	p.lastShown = &Shown{Serial: nextSerial(), Result: r, Model: p.s.ResultModel, Figures: p.figs, Sections: p.sections}
	return p.lastShown
}

// sameSections reports whether two tables are the same slice.
func sameSections(a, b []Section) bool {
	return len(a) == len(b) && (len(a) == 0 || &a[0] == &b[0])
}
