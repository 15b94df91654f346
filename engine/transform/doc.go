// Package transform reparameterises a target.Density: a parameter bounded
// below is fitted on the log scale and one bounded on both sides on the logit
// scale, with the log-Jacobian of the map added so that the transformed
// density describes the same distribution. Gradients and Hessians follow by
// the chain rule, exactly.
package transform
