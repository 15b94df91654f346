// Package hermite computes Gauss-Hermite quadrature rules for the weight
// e^(-x^2) on the real line, the rules behind bellcheck's Gaussian
// expectations (the reverse-KL fits, the comparison's cubature, the page's
// pushforward moments).
//
// It replaces gonum's quad.Hermite in bellcheck because that package's
// tabulated starting values weigh about 400 kB in the WebAssembly file.
package hermite
