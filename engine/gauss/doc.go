// Package gauss holds the multivariate normal the fits produce and the
// comparison, the plots and the report use: a Gaussian value (mean and
// covariance) and its prepared form (factorised, with its precision, log
// normaliser, density, marginal densities and the ellipses that hold a
// given mass).
package gauss
