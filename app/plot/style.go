package plot

import "bellcheck/engine"

// Method names one of the curves bellcheck draws: the exact density, or a
// Gaussian fit by its engine.Method (CurveOf).
type Method int

// Exact is the exact density's curve; the fits' curves follow it in the
// order of engine.Methods.
const Exact Method = 0

// The fits' curves, one per engine.Method.
const (
	Laplace   = Method(1 + engine.Laplace)
	ReverseKL = Method(1 + engine.ReverseKL)
	MeanField = Method(1 + engine.MeanField)
	ForwardKL = Method(1 + engine.ForwardKL)
)

// NumMethods is the number of curves: the length of arrays indexed by
// Method (the page's switches, the table's cells).
const NumMethods = 1 + engine.NumMethods

// CurveOf returns the curve of a fit.
func CurveOf(m engine.Method) Method { return Method(m) + 1 }

// Fit returns the fit a curve draws; false for the exact density.
func (m Method) Fit() (engine.Method, bool) {
	f := engine.Method(m - 1)
	return f, m != Exact && f.Valid()
}

// Methods lists every curve in column order: the exact density, then the
// fits in the order of engine.Methods.
var Methods = append([]Method{Exact}, Fits...)

// Fits lists the fits' curves in column order.
var Fits = func() []Method {
	out := make([]Method, 0, engine.NumMethods)
	for _, m := range engine.Methods {
		out = append(out, CurveOf(m))
	}
	return out
}()

// Style is how a method looks wherever it appears: in every plot, in the
// table's column heads and in the legend.
type Style struct {
	// Name is the label in legends and table heads; Long a one-line
	// description.
	Name, Long string
	// Key is the method's name in the engine's JSON ("exact", "laplace",
	// "reverse_kl", "mean_field", "forward_kl").
	Key string
	// Colour is "#rrggbb"; Dash an SVG stroke-dasharray ("" for solid);
	// Width the stroke width in CSS pixels.
	Colour string
	Dash   string
	Width  float64
}

// look is a curve's stroke.
type look struct {
	colour, dash string
	width        float64
}

// bellcheck's own palette. The colours differ in lightness by at least
// 0.07 in OKLab L (so they stay apart in grey-scale print and for any kind
// of colour blindness), each has at least 3:1 contrast on white (the WCAG 2
// threshold for graphics), and each method also has its own dash pattern,
// so colour is never the only cue. A method without a look of its own
// (one just added to the engine) is drawn in otherLook.
var (
	exactLook = look{"#1b2127", "", 2.2}
	fitLooks  = [engine.NumMethods]look{
		engine.Laplace:   {"#c36121", "7 3", 1.7},
		engine.ReverseKL: {"#1a3886", "1.5 2.5", 2.0},
		engine.MeanField: {"#7d2e82", "10 3 2 3", 1.5},
		engine.ForwardKL: {"#0f7a6a", "4 2", 1.7},
	}
	otherLook = look{"#5f6670", "2 2 6 2", 1.5}
)

// StyleOf returns the style of a method; the exact density's for a
// method that does not exist.
func StyleOf(m Method) Style {
	f, ok := m.Fit()
	if !ok {
		return Style{Name: "exact", Long: "exact density by quadrature on the grid", Key: "exact",
			Colour: exactLook.colour, Dash: exactLook.dash, Width: exactLook.width}
	}
	lk := fitLooks[f]
	if lk.colour == "" {
		lk = otherLook
	}
	return Style{Name: f.Label(), Long: f.Description(), Key: f.Key(), Colour: lk.colour, Dash: lk.dash, Width: lk.width}
}

// String returns the method's display name.
func (m Method) String() string { return StyleOf(m).Name }
