// Package compare measures how far a Gaussian approximation is from the
// exact density, evaluated on a grid (Compare) or integrated by a weighted
// node set (CompareNodes): KL divergences both ways, the Hellinger
// distance, errors of the mean and spread in exact standard deviations, and
// the exact mass inside the Gaussian's central 95 % region.
package compare
