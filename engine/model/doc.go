// Package model is the front end of bellcheck's model language: it scans and
// parses the text of a model, checks it (names, arities, shapes, limits) and
// prints it back in canonical form. The checked Model is compiled to an
// evaluator by package eval.
//
// A model is a list of statements, one per line or separated by ';', with
// '#' starting a comment:
//
//	param NAME                 declare a parameter (fixes the order)
//	param NAME in [LO, HI]     ... with a support (LO may be -inf, HI inf)
//	NAME = EXPR                a constant, data vector or intermediate quantity
//	EXPR                       the log-density (natural log, up to a constant)
//	cost EXPR                  or the cost: the negative log-density
//
// Names that are used but neither defined nor declared are parameters, in
// order of first appearance. At most MaxParams parameters.
package model
