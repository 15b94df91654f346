package engine

import "fmt"

// Method is one of the Gaussian approximations that Analyse makes and
// compares with the exact posterior. Arrays indexed by Method (Fits,
// Marginal1D.Fits, the plots' styles, the page's switches) have NumMethods
// elements, and Methods lists the methods in the order every table, legend,
// plot and export shows them.
//
// A new method is added here, in one place: a constant before numMethods
// and its row in methodInfo (key, label, sentence form, description). The
// Result's JSON, the command line's table, the exports, the plots and the
// page then carry it; the stage that computes it appends a fitted value to
// the analysis's fits, and the comparison and the report treat it like the
// others.
type Method int

// The methods, in display order.
const (
	// Laplace is the Gaussian at the highest mode with the curvature there.
	Laplace Method = iota
	// ReverseKL is the Gaussian that minimises KL(q||p).
	ReverseKL
	// MeanField is ReverseKL with a diagonal covariance.
	MeanField
	// ForwardKL is the Gaussian that minimises KL(p||q): the exact moments.
	ForwardKL
	numMethods
)

// NumMethods is the number of methods: the length of arrays indexed by
// Method.
const NumMethods = int(numMethods)

// methodInfo describes each method: key is its name in the JSON (stable),
// label its name in tables and legends, term its name inside a sentence
// ("the reverse-KL fit"), long a one-line description.
var methodInfo = [NumMethods]struct{ key, label, term, long string }{
	Laplace:   {"laplace", "Laplace", "Laplace", "mode-curvature Gaussian (Laplace approximation)"},
	ReverseKL: {"reverse_kl", "reverse KL", "reverse-KL", "variational Gaussian, minimises KL(q||p)"},
	MeanField: {"mean_field", "mean-field", "mean-field", "variational Gaussian with diagonal covariance"},
	ForwardKL: {"forward_kl", "forward KL", "forward-KL", "moment matching, minimises KL(p||q)"},
}

// Methods lists every method in display order.
var Methods = func() []Method {
	ms := make([]Method, NumMethods)
	for i := range ms {
		ms[i] = Method(i)
	}
	return ms
}()

// Valid reports whether m is one of the methods.
func (m Method) Valid() bool { return m >= 0 && m < numMethods }

// Key returns the method's name in the Result's JSON: "laplace",
// "reverse_kl", "mean_field" or "forward_kl".
func (m Method) Key() string {
	if !m.Valid() {
		return fmt.Sprintf("method_%d", int(m))
	}
	return methodInfo[m].key
}

// Label returns the method's name in tables and legends ("reverse KL").
func (m Method) Label() string {
	if !m.Valid() {
		return m.Key()
	}
	return methodInfo[m].label
}

// Description returns a one-line description of the method.
func (m Method) Description() string {
	if !m.Valid() {
		return ""
	}
	return methodInfo[m].long
}

// String returns the method's label.
func (m Method) String() string { return m.Label() }

// term returns the method's name inside a sentence ("the reverse-KL fit").
func (m Method) term() string {
	if !m.Valid() {
		return m.Key()
	}
	return methodInfo[m].term
}

// MethodOf returns the method with the given JSON key.
func MethodOf(key string) (Method, bool) {
	for _, m := range Methods {
		if methodInfo[m].key == key {
			return m, true
		}
	}
	return 0, false
}
