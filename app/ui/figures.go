package ui

import (
	"math"
	"slices"
	"strconv"

	"bellcheck/app/figure"
	"bellcheck/app/plot"
	"bellcheck/engine"
)

// Panel is one drawn plot with the data behind it, for the read-out.
type Panel struct {
	// Serial numbers the panels the page draws (see Shown): first, so that
	// comparing two panels stops here.
	Serial uint64

	ID  string
	Fig *figure.Figure
	// I and J are the parameters across and up (J < 0 for a 1-D panel).
	I, J int
	// M is the 1-D marginal (1-D panels), P the pair (2-D panels).
	M *engine.Marginal1D
	P *engine.Marginal2D
	// Log reports whether a 1-D panel shows log-densities.
	Log bool
	// Names are the model's parameter names.
	Names []string
}

// FigureSet is every plot for one result: one marginal for a single
// parameter, one pair with edge marginals for two, and a grid of pairs with
// the marginals on the diagonal for three or four.
type FigureSet struct {
	// Serial numbers the sets the page draws (see Shown): first, so that
	// comparing two sets stops here.
	Serial uint64

	Dim    int
	Names  []string
	Main   *Panel     // 1-D or 2-D results
	Grid   [][]*Panel // 3-D and 4-D results: Grid[row][col], row = y parameter
	Corr   [][]string // upper-triangle text of the grid: correlations
	Result *engine.Result
}

// View is the plots' view: a log scale for 1-D densities and methods hidden.
type View struct {
	Log    bool
	Hidden [plot.NumMethods]bool
	// Hold, when set, keeps the plots' axes as they were; Pin is an
	// earlier result drawn faintly beneath (live.go).
	Hold *Axes
	Pin  *engine.Result
}

// BuildFigures draws every plot of a result. It returns nil when the result
// has no plots.
func BuildFigures(r *engine.Result, v View) *FigureSet { return buildFigures(r, v, nil) }

// buildFigures is BuildFigures calling pause, when set, between the panels
// of a 3-D or 4-D grid (ten panels in 4-D: the runner lets the browser run
// there).
func buildFigures(r *engine.Result, v View, pause func()) *FigureSet {
	if pause == nil {
		pause = func() {}
	}
	if r == nil || r.Plots == nil {
		return nil
	}
	d := len(r.Params)
	fs := &FigureSet{Dim: d, Names: r.Params, Result: r}
	marg := func(i int) *engine.Marginal1D { return marginalOf(r, i) }
	pair := func(i, j int) *engine.Marginal2D { return pairOf(r, i, j) }
	opts := func(id string, compact bool, x, y string) figure.Options {
		o := figure.Options{ID: id, Log: v.Log, Hidden: v.Hidden, Compact: compact, XLabel: x, YLabel: y, Candidates: candidateNames(r),
			CandidateX: candidateSpreads(r, slices.Index(r.Params, x)), CandidateY: candidateSpreads(r, slices.Index(r.Params, y))}
		v.Hold.apply(&o, r.Params, x, y)
		pinInto(&o, v.Pin, r.Params, x, y)
		return o
	}
	switch {
	case d == 1:
		if m := marg(0); m != nil {
			if f := figure.Marginal(m, opts("bc-f0", false, r.Params[0], "")); f != nil {
				fs.Main = &Panel{ID: "bc-f0", Fig: f, I: 0, J: -1, M: m, Log: v.Log, Names: r.Params}
			}
		}
	case d == 2:
		if p := pair(0, 1); p != nil {
			if f := figure.Pair(p, marg(0), marg(1), opts("bc-f01", false, r.Params[0], r.Params[1])); f != nil {
				fs.Main = &Panel{ID: "bc-f01", Fig: f, I: 0, J: 1, P: p, Names: r.Params}
			}
		}
	case d >= 3:
		// Each parameter keeps one range in every panel of the grid, so
		// the columns and rows line up.
		views := make([][2]float64, d)
		for i := range d {
			if m := marg(i); m != nil {
				lo, hi := figure.MarginalView(m, figure.Options{Hidden: v.Hidden, CandidateX: candidateSpreads(r, i)})
				views[i] = [2]float64{lo, hi}
			}
		}
		widenForPairs(views, r, v)
		if v.Hold.fits(r.Params) {
			copy(views, v.Hold.Ranges)
		}
		opts = func(id string, compact bool, x, y string) figure.Options {
			o := figure.Options{ID: id, Log: v.Log, Hidden: v.Hidden, Compact: compact, XLabel: x, YLabel: y, Candidates: candidateNames(r),
				CandidateX: candidateSpreads(r, slices.Index(r.Params, x)), CandidateY: candidateSpreads(r, slices.Index(r.Params, y))}
			for i, n := range r.Params {
				if n == x {
					o.XView = views[i]
				}
				if n == y {
					o.YView = views[i]
				}
			}
			pinInto(&o, v.Pin, r.Params, x, y)
			return o
		}
		fs.Grid = make([][]*Panel, d)
		fs.Corr = make([][]string, d)
		for row := range d {
			fs.Grid[row] = make([]*Panel, d)
			fs.Corr[row] = make([]string, d)
			for col := range d {
				pause()
				id := "bc-g" + strconv.Itoa(row) + strconv.Itoa(col)
				switch {
				case row == col:
					if m := marg(col); m != nil {
						if f := figure.Marginal(m, opts(id, true, r.Params[col], "")); f != nil {
							fs.Grid[row][col] = &Panel{ID: id, Fig: f, I: col, J: -1, M: m, Log: v.Log, Names: r.Params}
						}
					}
				case row > col: // lower triangle: x = col, y = row
					if p := pair(col, row); p != nil {
						if f := figure.Pair(p, nil, nil, opts(id, true, r.Params[col], r.Params[row])); f != nil {
							fs.Grid[row][col] = &Panel{ID: id, Fig: f, I: col, J: row, P: p, Names: r.Params}
						}
					}
				}
			}
		}
	}
	return fs
}

// ReadOut describes the data under a pointer at (vx, vy) in a panel's
// viewBox units: the nearest grid point and the densities there. ok is false
// outside the plot area.
func (p *Panel) ReadOut(vx, vy float64) (text string, cx, cy float64, ok bool) {
	f := p.Fig
	if vx < f.Plot.X0 || vx > f.Plot.X1 || vy < f.Plot.Y0 || vy > f.Plot.Y1 {
		return "", 0, 0, false
	}
	if p.M != nil {
		return p.ReadOutIndex(nearest(p.M.X, f.X.Invert(vx)), 0)
	}
	if p.P != nil {
		return p.ReadOutIndex(nearest(p.P.X, f.X.Invert(vx)), nearest(p.P.Y, f.Y.Invert(vy)))
	}
	return "", 0, 0, false
}

// ReadOutIndex describes grid point (ix, iy) and returns its position in
// viewBox units.
func (p *Panel) ReadOutIndex(ix, iy int) (text string, cx, cy float64, ok bool) {
	f := p.Fig
	if m := p.M; m != nil {
		if ix < 0 || ix >= len(m.X) {
			return "", 0, 0, false
		}
		x := m.X[ix]
		text = name(p.I, p) + " = " + plot.FormatNumber(x, 5)
		curves := figure.Curves(m)
		for _, meth := range plot.Methods {
			if c := curves[meth]; ix < len(c) {
				text += " · " + plot.StyleOf(meth).Name + " " + plot.FormatNumber(c[ix], 4)
			}
		}
		y := at(curves[plot.Exact], ix)
		if p.Log {
			y = math.Log(y)
		}
		cy = f.Y.At(y)
		if math.IsNaN(cy) || math.IsInf(cy, 0) {
			cy = f.Plot.Y1
		}
		return text, f.X.At(x), max(f.Plot.Y0, min(f.Plot.Y1, cy)), true
	}
	if q := p.P; q != nil {
		nx := len(q.X)
		if ix < 0 || ix >= nx || iy < 0 || iy >= len(q.Y) {
			return "", 0, 0, false
		}
		peak := 0.0
		for _, v := range q.Density {
			if v > peak && !math.IsInf(v, 0) {
				peak = v
			}
		}
		dens := q.Density[iy*nx+ix]
		text = name(p.I, p) + " = " + plot.FormatNumber(q.X[ix], 5) + ", " + name(p.J, p) + " = " + plot.FormatNumber(q.Y[iy], 5) +
			" · exact density " + plot.FormatNumber(dens, 4)
		if peak > 0 {
			text += " (" + plot.FormatNumber(100*dens/peak, 3) + " % of its peak)"
		}
		return text, f.X.At(q.X[ix]), f.Y.At(q.Y[iy]), true
	}
	return "", 0, 0, false
}

// GridSize returns the number of grid points across and up (up is 0 for a
// 1-D panel).
func (p *Panel) GridSize() (nx, ny int) {
	if p.M != nil {
		return len(p.M.X), 0
	}
	if p.P != nil {
		return len(p.P.X), len(p.P.Y)
	}
	return 0, 0
}

// Nearest returns the index of the grid point nearest to data (x, y).
func (p *Panel) Nearest(x, y float64) (ix, iy int) {
	if p.M != nil {
		return nearest(p.M.X, x), 0
	}
	if p.P != nil {
		return nearest(p.P.X, x), nearest(p.P.Y, y)
	}
	return 0, 0
}

func name(i int, p *Panel) string {
	if i >= 0 && i < len(p.Names) {
		return p.Names[i]
	}
	return "x" + strconv.Itoa(i+1)
}

// nearest returns the index of the value in the increasing xs closest to v.
func nearest(xs []float64, v float64) int {
	best, bi := math.Inf(1), 0
	for i, x := range xs {
		if d := math.Abs(x - v); d < best {
			best, bi = d, i
		}
	}
	return bi
}
