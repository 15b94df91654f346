package plot

// Method names one of the curves bellcheck draws: the exact density or one
// of the Gaussian fits.
type Method int

// The methods, in the order of the results table's columns.
const (
	Exact Method = iota
	Laplace
	ReverseKL
	MeanField
	ForwardKL
)

// Methods lists every method in column order.
var Methods = []Method{Exact, Laplace, ReverseKL, MeanField, ForwardKL}

// Fits lists the Gaussian fits in column order.
var Fits = []Method{Laplace, ReverseKL, MeanField, ForwardKL}

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

// styles is bellcheck's own palette. The colours differ in lightness by at
// least 0.07 in OKLab L (so they stay apart in grey-scale print and for any
// kind of colour blindness), each has at least 3:1 contrast on white (the
// WCAG 2 threshold for graphics), and each method also has its own dash
// pattern, so colour is never the only cue.
var styles = [...]Style{
	Exact: {Name: "exact", Long: "exact density by quadrature on the grid", Key: "exact",
		Colour: "#1b2127", Dash: "", Width: 2.2},
	Laplace: {Name: "Laplace", Long: "mode-curvature Gaussian (Laplace approximation)", Key: "laplace",
		Colour: "#c36121", Dash: "7 3", Width: 1.7},
	ReverseKL: {Name: "reverse KL", Long: "variational Gaussian, minimises KL(q||p)", Key: "reverse_kl",
		Colour: "#1a3886", Dash: "1.5 2.5", Width: 2.0},
	MeanField: {Name: "mean-field", Long: "variational Gaussian with diagonal covariance", Key: "mean_field",
		Colour: "#7d2e82", Dash: "10 3 2 3", Width: 1.5},
	ForwardKL: {Name: "forward KL", Long: "moment matching, minimises KL(p||q)", Key: "forward_kl",
		Colour: "#0f7a6a", Dash: "4 2", Width: 1.7},
}

// StyleOf returns the style of a method.
func StyleOf(m Method) Style {
	if m < 0 || int(m) >= len(styles) {
		return styles[Exact]
	}
	return styles[m]
}

// String returns the method's display name.
func (m Method) String() string { return StyleOf(m).Name }
