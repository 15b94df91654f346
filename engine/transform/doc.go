// Package transform owns the scale a parameter is fitted on: the Scale
// type (identity, log, logit) with its check against a support, the map
// from the fitting scale to the original one and its inverse, and the
// pushforward of a normal through it (mean and sd, interval, covariance).
// Wrap reparameterises a target.Density: a parameter bounded below is
// fitted on the log scale and one bounded on both sides on the logit scale,
// with the log-Jacobian of the map added so that the transformed density
// describes the same distribution. Gradients and Hessians follow by the
// chain rule, exactly.
package transform
