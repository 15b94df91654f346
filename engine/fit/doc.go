// Package fit finds the modes of a target log-density and fits Gaussians to
// it: the mode-curvature (Laplace) fit, the reverse-KL optimum over full and
// diagonal covariances by Gauss-Hermite cubature, and the forward-KL optimum
// (moment matching), with closed-form Gaussian helpers (KL between two
// Gaussians, entropy). The Gaussian itself is gauss.Gaussian.
package fit
