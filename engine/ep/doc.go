// Package ep approximates a posterior written as a product of factors by a
// Gaussian with expectation propagation (Minka 2001, "Expectation
// propagation for approximate Bayesian inference"; Bishop, Pattern
// Recognition and Machine Learning, section 10.7): each factor that is not
// already Gaussian gets a Gaussian site, and the sites are refined one at a
// time so that the approximation matches the mean and covariance of the
// factor times the rest of the approximation (the tilted distribution).
package ep
