// Package grid computes the exact reference for a density of one to four
// parameters by tensor-product quadrature over a box: the normaliser, the
// moments, the marginals, quantiles and modes' basins, each with an error
// estimate from the half-resolution rule on the same points. FindBox finds a
// box that holds all but a negligible share of the mass.
package grid
