// Package engine is bellcheck's numerical core: Analyse takes a checked
// model (from package model) and returns the exact posterior by quadrature
// on a grid, the Laplace, reverse-KL (full and mean-field) and forward-KL
// Gaussian fits, their comparison with the exact density, and plain
// diagnostics, as a Result whose JSON form is the contract shared by the
// command line and the page. It never touches the browser.
package engine
