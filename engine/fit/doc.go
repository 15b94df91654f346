// Package fit finds the modes of a target log-density and fits Gaussians to
// it: the mode-curvature (Laplace) fit, the reverse-KL optimum over full and
// diagonal covariances by Gauss-Hermite cubature, and the forward-KL optimum
// (moment matching), with the closed-form Gaussian helpers the comparison
// needs.
package fit
