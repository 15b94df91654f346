// Package eval compiles a checked model of bellcheck's model language to a
// flat instruction tape and evaluates it: the log-density at a point, at a
// block of points (one operation over the whole block before the next), and
// with its exact gradient and Hessian by forward-mode second-order automatic
// differentiation on the same tape. An *Evaluator implements target.Density.
package eval
