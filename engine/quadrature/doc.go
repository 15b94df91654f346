// Package quadrature is the exact reference: it integrates a density given
// on the unconstrained scale (log for [lo, inf], logit for [lo, hi], the
// Jacobian included by the caller) by a nested trapezoid rule in whitened,
// recentred coordinates, and summarises it (log Z, moments on both scales,
// quantiles, marginal and pair densities, the weighted node set).
//
// Design. The coordinates are u = L^-1 (z - m) with L the Cholesky factor
// of a covariance (the inverse negative Hessian at the mode, or a pilot
// rule's covariance). The axes are nested, outermost first; at each outer
// node the inner axes are recentred at the conditional mode (damped Newton
// from a prediction) and rescaled by the conditional curvature (Naylor and
// Smith 1982), so a funnel or a location whose scale is another parameter
// is followed. The innermost axis of a 3-D or 4-D rule, which has a line
// per node of the outer axes, takes its centre and width from the parabola
// through three values of log p instead of a gradient and Hessian of every
// parameter (exact for a Gaussian conditional; Newton steps where log p is
// not concave there). Along each axis the nodes are u = c + w phi(t), t = jh: phi =
// sinh where the tails decay no faster than a Gaussian (an algebraic tail
// becomes exponential in t: Trefethen and Weideman, SIAM Review 56, 2014),
// linear on a side that decays doubly exponentially (the side of a log-
// scale parameter towards its bound), chosen by probing log p at 4 and 8
// conditional sds. Each walk goes out until the density's share is below
// Tol of its peak and the second and fourth powers' shares are negligible
// or do not decay (Rue, Martino and Chopin 2009, section 6.5, walk each
// direction until log p has dropped). A pilot rule at step 2h orders the
// axes (the parameter whose spread the mode's curvature describes goes
// outside) and centres the main rule at the pilot's mean.
//
// Error estimate. The rules of steps h, 2h and 4h share nodes (every
// second and fourth index), so one pass gives three values of every sum.
// It assumes the exponential convergence of the trapezoid rule for an
// integrand analytic in a strip around the real t axis and decaying fast,
// err(h) ~ A exp(-c/h): with e1 = |I_4h - I_2h| and e2 = |I_2h - I_h|,
// halving h squares the relative error (err(h) ~ e2^2/|I|), and the rate
// the values show gives err(h) ~ e2^3/e1^2; the larger, times 3, is the
// discretisation error; where e1 <= e2 (not yet converging) e2 itself. For
// log Z, where the fitted rate c = 4h log(e1/e2) is at least 2 (the rule
// at 4h is then pre-asymptotic, its rate slower than the finer ones'), the
// squaring alone. The truncation error is the geometric tail beyond each
// walk's last node (exact for a share decaying exponentially in t). The
// estimate covers the actual error on every test case and is 20 to 60
// times pessimistic on smooth ones.
//
// Marginals. The outermost axis's walk is itself the marginal of its
// parameter (z = m + L00 u, L lower triangular): its sums give that curve
// at the finest step. Every other parameter's marginal is walked along its
// own node map, each node a nested rule over the others (a slice).
//
// Infinite moments. An algebraic tail |u|^-a of the density gives a share
// falling like e^-(a-1)t in t, and u^k multiplies it by e^kt. A moment
// whose share does not fall at a rate of at least 0.25 per unit t at the end
// of a walk is infinite (NaN, with a flag); when the density's own share
// does not fall, the density is improper.
package quadrature
