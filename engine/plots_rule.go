package engine

import (
	"errors"
	"fmt"
	"math"
	"sort"

	"bellcheck/engine/gauss"
	"bellcheck/engine/grid"
	"bellcheck/engine/quadrature"
	"bellcheck/engine/special"
)

// Plot resolution of the nested rule's plots, by the number of parameters
// (index d-1): points along each marginal, and along each axis of a pair's
// image (more for a strongly correlated pair: pairPoints). Every point of a
// marginal or a pair is a nested rule over the other parameters, so the
// counts fall with the dimension. A pair computed at fewer than pairShown
// points is refined to about that many by interpolating its log-density
// (upsample). Against pairs computed directly at the refined points, on the
// gallery: in 3-D and 4-D, 21 and 15 points with the logarithm interpolated
// were off by 0.6 to 3.4 % of the peak, as 31 and 21 with the density
// interpolated were (0.5 to 3.2 %); in 2-D, 81 points (0.4 % on the
// outlier example, where 41 were off by 4 %). A correlated normal's pair
// at 21 points is off by the pair rule's own 2e-4 (TestRulePlotsGaussian).
var (
	rulePlot1D = [4]int{241, 161, 121, 61}
	rulePlot2D = [4]int{0, 81, 21, 15}
)

// costlyRulePoints: where the rule took more evaluations than this (a
// thin, bent ridge, such as a chaotic cost's over a long window), the
// grid's quantiles and plots stand in beside a full grid that resolves
// the density (stage_quadrature.go).
const costlyRulePoints = 500000

// pairShown is about the number of points along each axis of the pair
// image handed to the page: a pair computed at fewer points is refined to
// it by cubic interpolation (upsample), so that its contours are smooth
// curves, not the polygons of a coarse lattice.
const pairShown = 97

// plotTail is the share of the mass left out of each end of a plot's
// range (before widening by plotMargin of the range on each side, on the
// unconstrained scale).
//
// plotReach bounds how far a range reaches beyond the median, in units of
// the distance from the median to the 2.5 % (or 97.5 %) quantile: a
// normal's 0.05 % quantile lies 1.68 of them out, untouched, while the
// 99.95 % quantile of a Student t with 2 dof (the noise sd from three
// readings with a 1/s prior) lies 13 out and squeezed the bulk of the
// marginal into a twelfth of the plot (common practice: a plot shows the
// body and the start of the tails).
const (
	plotTail   = 5e-4
	plotMargin = 0.15
	plotReach  = 2.5
)

// plotsFromRule draws the exact marginals and pair marginals from the
// nested rule (quadrature.Result.Marginal and Pair: at each plot point a
// nested rule over the other parameters) on plot ranges fitted to the
// posterior's width, and each fit's curves and ellipses, all on the
// original scale. The range of a parameter runs between its 0.05 % and
// 99.95 % quantiles, held within plotReach of its median (see ruleRanges),
// widened by 15 % of that span on each side (on the original scale where
// that stays inside the support, else on the unconstrained one); the
// points are evenly spaced on the original scale.
//
// beforePairs, when set, is called with the marginals before the pairs.
func (a *analysis) plotsFromRule(res *Result, beforePairs func([]Marginal1D)) (*Plots, error) {
	q := a.ref.quad
	d := a.d
	pl := &Plots{}
	fits, cands := a.plotted(res)
	pairs := d * (d - 1) / 2
	parts := float64(d + pairs)
	exact, ranges, err := a.ruleMarginals(func(k int) { a.tr.at(float64(k) / parts) })
	if err != nil {
		return nil, err
	}
	for k := 0; k < d; k++ {
		m := exact[k]
		xs := m.X
		for meth, g := range fits {
			if g != nil {
				m.Fits[meth] = a.normalCurve(g, k, xs)
			}
		}
		if len(cands) > 0 {
			m.Candidates = make([][]float64, len(cands))
		}
		for c, g := range cands {
			if g != nil {
				m.Candidates[c] = a.normalCurve(g, k, xs)
			}
		}
		pl.Marginals = append(pl.Marginals, m)
	}
	if beforePairs != nil {
		beforePairs(pl.Marginals)
	}
	pi := 0
	for i := 0; i < d; i++ {
		for j := i + 1; j < d; j++ {
			a.tr.at(float64(d+pi) / parts)
			pi++
			if err := a.ctx.Err(); err != nil {
				return nil, err
			}
			n := a.pairPoints(i, j, ranges)
			xs, ys := evenly(ranges[i], n), evenly(ranges[j], n)
			dens, err := q.Pair(a.ctx, i, j, xs, ys)
			if err != nil {
				if ctxErr := a.ctx.Err(); ctxErr != nil {
					return nil, ctxErr
				}
				return nil, err
			}
			if n0 := n; n < pairShown {
				var rough []bool
				xs, ys, dens, rough = upsampleRough(dens, xs, ys, (pairShown+n-3)/(n-1))
				n = len(xs)
				if d == 2 {
					// In 2-D a point costs one evaluation of log p: the
					// points the samples do not resolve are evaluated.
					if err := a.evaluateRough(q, i, j, xs, ys, dens, rough); err != nil {
						return nil, err
					}
				} else if err := a.checkRoughCells(q, i, j, xs, ys, dens, rough, (len(xs)-1)/(n0-1), n0*n0); err != nil {
					return nil, err
				}
			}
			// Levels gives shares of the plot's mass; the pair density is
			// normalised, so the shares of the whole mass are f / total.
			fx, fy, fd := refine(dens, xs, ys, levelFactor(n))
			mass, total := cellMasses(fd, fx, fy)
			fr := make([]float64, len(contourMasses))
			for c, f := range contourMasses {
				fr[c] = f
				if total > f && total < 1 {
					fr[c] = f / total
				}
			}
			lv := grid.Levels(fd, mass, fr)
			if d == 2 {
				lv = a.pairLevels2D(lv)
			} else {
				rawMass, _ := cellMasses(dens, xs, ys)
				raw := grid.Levels(dens, rawMass, fr)
				if lv, err = a.pairLevelsNested(q, i, j, lv, raw, total); err != nil {
					return nil, err
				}
			}
			m2 := Marginal2D{I: i, J: j, X: xs, Y: ys, Levels: [3]float64{lv[0], lv[1], lv[2]}, Ellipses: Ellipses{}}
			// Pair gives (xs[u], ys[v]) at u*len(ys)+v; the page wants
			// Density[v*len(xs)+u].
			m2.Density = make([]float64, len(xs)*len(ys))
			for u := range xs {
				for v := range ys {
					m2.Density[v*len(xs)+u] = dens[u*len(ys)+v]
				}
			}
			a.addEllipses(&m2, fits, cands)
			pl.Pairs = append(pl.Pairs, m2)
		}
	}
	return pl, nil
}

// normalCurve returns the marginal density of parameter k of the normal g
// (on the fitting scale) at xs on the original scale.
func (a *analysis) normalCurve(g *gauss.Prepared, k int, xs []float64) []float64 {
	curve := make([]float64, len(xs))
	for j, x := range xs {
		z := a.maps[k].FromOriginal(x)
		if math.IsNaN(z) || math.IsInf(z, 0) {
			continue
		}
		curve[j] = g.MarginalPDF(k, z) / math.Exp(a.maps[k].LogJacobian(z))
	}
	return curve
}

// ruleRanges returns each parameter's plot range on the original scale
// (see plotsFromRule): between the marginal's plotTail and 1 - plotTail
// quantiles from its Curve (the rule's walk along the parameter, exact to
// the rule's accuracy) or, where it has none, from the rule's walks along
// it (quadrature.Result.WalkQuantiles), each end within plotReach of the
// median, widened by plotMargin of that span on each side; four sds on the
// unconstrained scale where neither gives them. The curves are returned
// too, walked here where the exact stage left none.
func (a *analysis) ruleRanges(q *quadrature.Result) ([][2]float64, []*quadrature.Curve, error) {
	d := a.d
	out := make([][2]float64, d)
	curves := make([]*quadrature.Curve, d)
	for k := 0; k < d; k++ {
		cv := a.ref.curves[k]
		if cv == nil && (a.ref.curves == nil || (a.ref.curvesLater[k] && !a.costlyCurve(q))) {
			// The exact stage walked none, or left this one to the plots
			// (its quantiles came from the rule's walks); a failed walk is
			// not tried again.
			var err error
			if cv, err = q.Curve(a.ctx, k, fineCurves(q)); err != nil && !errors.Is(err, quadrature.ErrCurve) {
				return nil, nil, err
			}
		}
		curves[k] = cv
		mp := a.ref.quadMaps[k]
		var zlo, zhi, xlo, xhi float64
		probs := []float64{plotTail, 0.025, 0.5, 0.975, 1 - plotTail}
		var qs []float64
		if cv != nil {
			qs = cv.Quantiles(probs)
		} else if wq, est, err := q.WalkQuantiles(k, probs); err == nil && est <= walkQuantileTol {
			// No curve, but the rule's walks along the parameter give its
			// quantiles (a funnel's location: four sds would reach far
			// past its peak's body).
			qs = wq
		}
		if qs != nil {
			xlo = max(qs[0], qs[2]-plotReach*(qs[2]-qs[1]))
			xhi = min(qs[4], qs[2]+plotReach*(qs[3]-qs[2]))
			zlo, zhi = mp.FromOriginal(xlo), mp.FromOriginal(xhi)
		} else {
			// No curve: four of the rule's sds on the unconstrained
			// scale on each side of its mean.
			m, sd := q.Unconstrained.Mean[k], math.Sqrt(q.Unconstrained.Cov[k*d+k])
			zlo, zhi = m-4*sd, m+4*sd
		}
		span := zhi - zlo
		if !(span > 0) || math.IsInf(span, 0) {
			return nil, nil, fmt.Errorf("engine: no plot range for %s (from %g to %g on its unconstrained scale)", a.names[k], zlo, zhi)
		}
		out[k] = [2]float64{mp.ToOriginal(zlo - plotMargin*span), mp.ToOriginal(zhi + plotMargin*span)}
		if qs != nil {
			// The margin on the original scale, where the axis is drawn,
			// on each side where it stays inside the support (on the log
			// scale it multiplied a heavy tail's end by 1.8).
			w := xhi - xlo
			if lo := xlo - plotMargin*w; lo > mp.Lo {
				out[k][0] = lo
			}
			if hi := xhi + plotMargin*w; hi < mp.Hi {
				out[k][1] = hi
			}
		}
	}
	return out, curves, nil
}

// evaluateRough overwrites the points of a 2-D pair's image that rough
// marks (the interpolation took the monotone cubic there: a funnel's neck
// or a steep tail the samples do not resolve) by the density itself, a
// row of the image at a time (layout of quadrature.Pair). On Neal's funnel
// in 2-D the interpolated image was off by half the peak next to the
// neck; the dose-response example, whose samples resolve it, has no point
// marked.
func (a *analysis) evaluateRough(q *quadrature.Result, i, j int, xs, ys, dens []float64, rough []bool) error {
	var at []int
	for u := range xs {
		at = at[:0]
		for v := range ys {
			if rough[u*len(ys)+v] {
				at = append(at, v)
			}
		}
		if err := a.pairRow(q, i, j, xs, ys, dens, u, at); err != nil {
			return err
		}
	}
	return nil
}

// pairRow computes the pair density of (i, j) at the image's points (xs[u],
// ys[v]) for v in at, writing them into dens (layout of quadrature.Pair).
func (a *analysis) pairRow(q *quadrature.Result, i, j int, xs, ys, dens []float64, u int, at []int) error {
	if len(at) == 0 {
		return nil
	}
	yv := make([]float64, len(at))
	for k, v := range at {
		yv[k] = ys[v]
	}
	row, err := q.Pair(a.ctx, i, j, []float64{xs[u]}, yv)
	if err != nil {
		if ctxErr := a.ctx.Err(); ctxErr != nil {
			return ctxErr
		}
		return err
	}
	for k, v := range at {
		dens[u*len(ys)+v] = row[k]
	}
	return nil
}

// checkRoughCells is evaluateRough for 3-D and 4-D, where each point
// costs a slice's rule: the image is checked cell by cell of the sample
// grid (f image points a side). In a cell holding points that rough marks
// with a value above roughFloor of the image's peak, the slices at the
// cell's middle point and at its rough point of largest value are
// computed; where either differs from the interpolated value by more than
// roughTol of the peak, the cell's rough points are computed too. The
// cells go by decreasing value, within budget slices (the pair's own
// sample count: the pair costs at most about twice as much). Against
// quadratures of the slices at the points where the images changed most:
// the 4-D funnel benchmark's pairs were off by 0.3 to 0.47 of their peak,
// now by at most 3e-4; the 3-D funnel's by 0.09 and 0.9, now 1.4e-4 and
// 1e-9; the regression with unknown noise's by 0.19, now 2e-4 there (its
// image at every point: TestRegressionPairImage); the clock example's
// pairs with the noise by 0.028, now 2e-4, for about 30 ms more natively
// (its plots 93 -> 126 ms, the analysis 370 -> 418; medians of 3
// alternated runs of 5). What is left is the
// interpolation's error where the samples do resolve the density (a few
// per cent of the peak: see rulePlot2D).
func (a *analysis) checkRoughCells(q *quadrature.Result, i, j int, xs, ys, dens []float64, rough []bool, f, budget int) error {
	if f < 2 {
		return nil
	}
	ny := len(ys)
	peak := 0.0
	for _, v := range dens {
		peak = max(peak, v)
	}
	type cell struct {
		cx, cy int
		top    float64
		tu, tv int // the rough point of largest value, not a sample
	}
	var cells []cell
	for cx := 0; cx+1 < len(xs) && cx*f+f < len(xs); cx++ {
		for cy := 0; cy*f+f < ny; cy++ {
			top, tu, tv := 0.0, -1, -1
			for u := cx * f; u <= cx*f+f; u++ {
				for v := cy * f; v <= cy*f+f; v++ {
					if rough[u*ny+v] && dens[u*ny+v] > top {
						top = dens[u*ny+v]
						if u%f != 0 || v%f != 0 {
							tu, tv = u, v
						}
					}
				}
			}
			if top > roughFloor*peak {
				cells = append(cells, cell{cx, cy, top, tu, tv})
			}
		}
	}
	sort.Slice(cells, func(a, b int) bool { return cells[a].top > cells[b].top })
	spent := 0
	slices := func(u int, vs []int) error {
		spent += len(vs)
		return a.pairRow(q, i, j, xs, ys, dens, u, vs)
	}
	for _, c := range cells {
		if spent >= budget {
			break
		}
		mu, mv := c.cx*f+f/2, c.cy*f+f/2
		was := dens[mu*ny+mv]
		if err := slices(mu, []int{mv}); err != nil {
			return err
		}
		done := func(u, v int) bool { return u == mu && v == mv }
		ok := math.Abs(dens[mu*ny+mv]-was) <= roughTol*peak
		if ok && c.tu >= 0 && !done(c.tu, c.tv) {
			was = dens[c.tu*ny+c.tv]
			if err := slices(c.tu, []int{c.tv}); err != nil {
				return err
			}
			ok = math.Abs(dens[c.tu*ny+c.tv]-was) <= roughTol*peak
			done = func(u, v int) bool { return (u == mu && v == mv) || (u == c.tu && v == c.tv) }
		}
		if ok {
			continue
		}
		for u := c.cx * f; u <= c.cx*f+f; u++ {
			var vs []int
			for v := c.cy * f; v <= c.cy*f+f; v++ {
				if rough[u*ny+v] && !done(u, v) {
					vs = append(vs, v)
					rough[u*ny+v] = false // a neighbouring cell does not compute it again
				}
			}
			if len(vs) > 0 {
				if err := slices(u, vs); err != nil {
					return err
				}
			}
		}
	}
	return nil
}

// roughFloor and roughTol are checkRoughCells' thresholds, as shares of
// the image's peak.
const (
	roughFloor = 1e-2
	roughTol   = 1e-2
)

// walkDensityTol bounds the error estimate of a marginal density from
// the rule's walks (quadrature.Result.WalkDensity), relative to its
// largest value on the plot, for it to be drawn where the marginal has no
// curve; else it is drawn point by point. On the group model's effects,
// whose marginals have a logarithmic peak, the walks' density was off by
// 2e-3 to 9e-3 of the peak (estimates 1.4e-3 to 7.7e-3), point by point
// by 1e-8 to 6e-4; on the funnel's x by 1.7e-7 (estimate 1.5e-5).
const walkDensityTol = 1e-3

// walkDensityTolCostly is walkDensityTol for a marginal whose own walk
// ruleRanges did not take because it would cost about a rule (costlyCurve):
// a plot's tolerance (a pair image's interpolation is off by up to 3.4 %
// of its peak; see upsample). On a Poisson model with two site effects the
// walks' densities of the effects were within 4.8e-4 and 1.2e-3 of their
// peaks of the marginals' own walks (estimates 5.8e-3 and 1.3e-3), and
// its plots took 1.4 s instead of 4.4 s natively.
const walkDensityTolCostly = 2e-2

// levelPoints is about the number of points along each axis to which
// refine subdivides a pair's plot grid before the contour levels are
// found: the superlevel sets' masses are sums over cells, whose error is
// of the order of a cell.
const levelPoints = 161

// levelFactor is the subdivision that brings an image of n points a side
// nearest to levelPoints (at least 1): an image of 121 points is not
// subdivided (taking it to 241 a side made finding the levels 8 % of an
// analysis under node; the levels of 2-D pairs moved by 3 % at most, a
// contour's radius by 0.018 sd).
func levelFactor(n int) int {
	return max(1, int(math.Round(float64(levelPoints-1)/float64(n-1))))
}

// cellMasses returns the mass of each point of a density on xs × ys (its
// density times its trapezoid cell; layout of quadrature.Pair) and their
// total, for grid.Levels. Points where the density is not positive and
// finite weigh nothing.
func cellMasses(dens, xs, ys []float64) ([]float64, float64) {
	cell := func(v []float64, a int) float64 {
		return (v[min(a+1, len(v)-1)] - v[max(a-1, 0)]) / 2
	}
	mass := make([]float64, len(dens))
	total := 0.0
	for a := range xs {
		for b := range ys {
			if v := dens[a*len(ys)+b]; v > 0 && !math.IsInf(v, 1) {
				mass[a*len(ys)+b] = v * cell(xs, a) * cell(ys, b)
				total += mass[a*len(ys)+b]
			}
		}
	}
	return mass, total
}

// refine returns the grid xs × ys subdivided f times along each axis, and
// the density there by bilinear interpolation (layout of
// quadrature.Pair: element a*len(ys)+b at (xs[a], ys[b])).
func refine(dens, xs, ys []float64, f int) ([]float64, []float64, []float64) {
	sub := func(v []float64) []float64 {
		out := make([]float64, 0, (len(v)-1)*f+1)
		for i := 0; i+1 < len(v); i++ {
			for s := 0; s < f; s++ {
				out = append(out, v[i]+(v[i+1]-v[i])*float64(s)/float64(f))
			}
		}
		return append(out, v[len(v)-1])
	}
	fx, fy := sub(xs), sub(ys)
	ny := len(ys)
	fd := make([]float64, len(fx)*len(fy))
	for a := range fx {
		i, u := a/f, float64(a%f)/float64(f)
		i1 := min(i+1, len(xs)-1)
		for b := range fy {
			j, v := b/f, float64(b%f)/float64(f)
			j1 := min(j+1, ny-1)
			fd[a*len(fy)+b] = (1-u)*(1-v)*dens[i*ny+j] + u*(1-v)*dens[i1*ny+j] +
				(1-u)*v*dens[i*ny+j1] + u*v*dens[i1*ny+j1]
		}
	}
	return fx, fy, fd
}

// upsample returns the evenly spaced grid xs × ys subdivided f times along
// each axis and the density there by Catmull-Rom cubic interpolation
// along each axis in turn (layout of quadrature.Pair: element a*len(ys)+b
// at (xs[a], ys[b])). Where the four values of an interval's stencil are
// positive and their logarithm bends by at most logBend between
// neighbours (the spacing resolves the density's curvature), the
// logarithm is interpolated: Catmull-Rom's tangents are exact for a
// quadratic, so a normal density (and a product of normals along each
// axis) is reproduced to rounding, and a density near one has the error
// of its departure from it. Elsewhere (a tail that falls steeply, zeros,
// the logarithmic ridge of a hierarchical model's pair of effects) the
// density itself is, by a monotone cubic (monotoneCubic), which stays
// between the two samples: Catmull-Rom's cubic there overshot, and where
// it fell below zero the image had holes (a site-effects model's pair
// next to its ridge was 0 where a quadrature of ours gives 2e-3, and 17
// times too high nearby; with the monotone cubic at most 4 times). On a
// normal sampled 2.5 and 3 sds apart the monotone cubic is off by 0.075
// and 0.18 of the peak, Catmull-Rom's by 0.13 and 0.24.
func upsample(dens, xs, ys []float64, f int) ([]float64, []float64, []float64) {
	fx, fy, out, _ := upsampleRough(dens, xs, ys, f)
	return fx, fy, out
}

// upsampleRough is upsample that also marks, in rough (the layout of
// out), the interpolated points where a stencil along either axis took the
// monotone cubic: the density there is not resolved by the samples (a
// funnel's neck, a steep tail), and a caller that can evaluate it directly
// should.
func upsampleRough(dens, xs, ys []float64, f int) (fx, fy, out []float64, rough []bool) {
	fx, fy = evenly([2]float64{xs[0], xs[len(xs)-1]}, (len(xs)-1)*f+1), evenly([2]float64{ys[0], ys[len(ys)-1]}, (len(ys)-1)*f+1)
	ip := newInterpolator(max(len(xs), len(ys)), f)
	// Rows first (along y for each x), then columns.
	rows := make([][]float64, len(xs))
	rowRough := make([][]bool, len(xs))
	for a := range xs {
		rows[a], rowRough[a] = make([]float64, len(fy)), make([]bool, len(fy))
		ip.along(dens[a*len(ys):(a+1)*len(ys)], rows[a])
		copy(rowRough[a], ip.rough)
	}
	out = make([]float64, len(fx)*len(fy))
	rough = make([]bool, len(fx)*len(fy))
	col := make([]float64, len(xs))
	fine := make([]float64, len(fx))
	for b := range fy {
		for a := range xs {
			col[a] = rows[a][b]
		}
		ip.along(col, fine)
		for a, v := range fine {
			i := min(a/f, len(xs)-1)
			i1 := min(i+1, len(xs)-1)
			out[a*len(fy)+b] = v
			rough[a*len(fy)+b] = ip.rough[a] || (a%f != 0 && (rowRough[i][b] || rowRough[i1][b])) || (a%f == 0 && rowRough[i][b])
		}
	}
	return fx, fy, out, rough
}

// interpolator is upsample's scratch: a vector's values and logarithms,
// each padded by one element at either end for the stencils of the end
// intervals (plain loops over slices: closures per element took a fifth of
// upsample's time natively and more under WebAssembly).
type interpolator struct {
	f    int
	p, l []float64
	// rough marks, after along, the output points interpolated by the
	// monotone cubic (the samples themselves are not rough).
	rough []bool
}

func newInterpolator(n, f int) *interpolator {
	return &interpolator{f: f, p: make([]float64, n+2), l: make([]float64, n+2), rough: make([]bool, (n-1)*f+1)}
}

// along writes into out ((len(v)-1)*f+1 values) the values v (evenly
// spaced) and f-1 interpolated points between each pair of neighbours.
func (ip *interpolator) along(v, out []float64) {
	n, f := len(v), ip.f
	p, l := ip.p[:n+2], ip.l[:n+2]
	for i, x := range v {
		p[i+1] = x
		l[i+1] = math.NaN()
		if x > 0 && !math.IsInf(x, 1) {
			l[i+1] = math.Log(x)
		}
	}
	// Beyond the ends the values repeat, and the logarithm is extended as
	// the quadratic through the last three values (exact for a normal).
	p[0], p[n+1] = v[0], v[n-1]
	if n < 3 {
		l[0], l[n+1] = l[1], l[n]
	} else {
		l[0] = 3*l[1] - 3*l[2] + l[3]
		l[n+1] = 3*l[n] - 3*l[n-1] + l[n-2]
	}
	o := 0
	for i := 0; i+1 < n; i++ {
		p0, p1, p2, p3 := p[i], p[i+1], p[i+2], p[i+3]
		l0, l1, l2, l3 := l[i], l[i+1], l[i+2], l[i+3]
		inLog := math.Abs(l0-2*l1+l2) <= logBend && math.Abs(l1-2*l2+l3) <= logBend // false for a NaN
		// The sample itself, exactly.
		out[o] = p1
		ip.rough[o] = false
		o++
		for s := 1; s < f; s++ {
			t := float64(s) / float64(f)
			if inLog {
				out[o] = special.Exp(catmullRom(l0, l1, l2, l3, t))
			} else {
				out[o] = monotoneCubic(p0, p1, p2, p3, t)
			}
			ip.rough[o] = !inLog
			o++
		}
	}
	out[o] = v[n-1]
	ip.rough[o] = false
}

// logBend is the largest second difference of a stencil's log-density for
// which upsample interpolates the logarithm: a normal sampled h of its
// conditional sds apart bends by h^2, so up to two of them apart.
const logBend = 4

// pairPoints returns the points a side of the pair (i, j)'s image: the
// default of the dimension (rulePlot2D), more for a strongly correlated
// pair, so that its spacing is at most condSpacing of the conditional sd
// sqrt(1 - rho^2) (in each marginal's sds; exact correlation rho on the
// original scale), up to pairShown. A pair with correlation 0.99 sampled
// at 21 points a side lay 3 conditional sds apart: its ridge fell between
// the samples, the image was off by 0.43 of its peak and its contours'
// radii by 0.18 sd.
func (a *analysis) pairPoints(i, j int, ranges [][2]float64) int {
	n := rulePlot2D[a.d-1]
	o := &a.ref.original
	if o.Corr == nil || len(o.SD) <= max(i, j) {
		return n
	}
	rho := o.Corr[i][j]
	cond := math.Sqrt(1 - rho*rho)
	span := max((ranges[i][1]-ranges[i][0])/o.SD[i], (ranges[j][1]-ranges[j][0])/o.SD[j])
	if !(cond > 0) || math.IsNaN(span) || math.IsInf(span, 0) {
		return n
	}
	spacing := condSpacing
	if q := a.ref.quad; q != nil && q.NoMode() {
		spacing = condSpacingNoMode
	}
	need := 1 + int(math.Ceil(span/(spacing*cond)))
	return min(max(n, need), pairShown)
}

// condSpacing is pairPoints' largest spacing in conditional sds: the
// log-density then bends by at most its square, within logBend.
//
// condSpacingNoMode is the same for a density with no mode on the
// unconstrained scale (a hierarchical scale on its bound): there the
// conditional width of a pair varies across its image (the effects'
// spread shrinks with the scale), and the correlation's conditional sd
// overstates it in places. On two sites' Poisson counts with site effects
// under a half-normal sd, the pair (a, e2) (correlation -0.89) at 17
// points a side (condSpacing) had 395 points of its image near its 99 %
// contour (between 0.3 and 20 times its level) more than 10 % off a
// quadrature of ours, and a jagged contour; at 33 (this spacing), 17, all
// next to e2 = 0, where the pair density has a logarithmic ridge (the
// model's plots took 1.42 s natively instead of 1.12).
const (
	condSpacing       = 1.8
	condSpacingNoMode = 0.9
)

// monotoneCubic is the cubic Hermite interpolant between p1 (t = 0) and p2
// (t = 1) with the tangents of Fritsch and Butland (1984): at each end the
// harmonic mean of the secants on either side, 0 where they differ in
// sign. It stays between p1 and p2 (no overshoot, so never below 0 between
// positive values).
func monotoneCubic(p0, p1, p2, p3, t float64) float64 {
	d0, d1, d2 := p1-p0, p2-p1, p3-p2
	tangent := func(a, b float64) float64 {
		if a*b <= 0 {
			return 0
		}
		return 2 * a * b / (a + b)
	}
	m1, m2 := tangent(d0, d1), tangent(d1, d2)
	t2, t3 := t*t, t*t*t
	return (2*t3-3*t2+1)*p1 + (t3-2*t2+t)*m1 + (-2*t3+3*t2)*p2 + (t3-t2)*m2
}

// catmullRom is the Catmull-Rom cubic through p1 (t = 0) and p2 (t = 1)
// with tangents (p2 - p0)/2 and (p3 - p1)/2.
func catmullRom(p0, p1, p2, p3, t float64) float64 {
	return p1 + 0.5*t*(p2-p0+t*(2*p0-5*p1+4*p2-p3+t*(3*(p1-p2)+p3-p0)))
}

// evenly returns n points evenly spaced over r, ends included.
func evenly(r [2]float64, n int) []float64 {
	xs := make([]float64, n)
	for i := range xs {
		xs[i] = r[0] + (r[1]-r[0])*float64(i)/float64(n-1)
	}
	xs[n-1] = r[1]
	return xs
}

// pairLevels2D returns the contour levels of a 2-D density: the image's
// (lv), or, where the image does not resolve the density, the nested
// rule's. In 2-D the pair is the density itself, so its superlevel sets'
// masses are sums over the rule's nodes too, whose spacing follows the
// density (a funnel's neck, narrower than the image's cells, where the
// cells' sums put the levels of Neal's funnel 1.8 to 3.8 times too high
// against a Monte Carlo estimate; the nodes' within 4 %). The node sums are
// first-order in the nodes' spacing (a normal's 86 % contour's radius off
// by 0.04 sd, the image's by 1e-4), so the image's levels stand unless the
// two differ by more than levelDispute at the 39 or 86 % level (the 99 %
// level, far out in the tails, differs more on smooth densities too).
func (a *analysis) pairLevels2D(lv []float64) []float64 {
	if !a.ref.onNodes() {
		return lv
	}
	byNodes, ok := levelsOfNodes(quadrature.NodeShares(a.ref.quad.Nodes, a.ref.logZ, a.ref.quadMaps))
	if !ok {
		return lv
	}
	for c := 0; c < 2; c++ {
		if !(math.Abs(math.Log(byNodes[c]/lv[c])) <= levelDispute) {
			return byNodes
		}
	}
	return lv
}

// pairLevelsNested returns the contour levels of pair (i, j) in 3-D and
// 4-D: the image's (lv), or, where the image does not resolve the density,
// the levels from the nodes of a nested rule over the pair marginal
// (quadrature.PairNodes), whose spacing follows the density as the main
// rule's does in 2-D (pairLevels2D). The image does not resolve it where
// its cells' mass (total; the plot ranges hold about 99.9 % of each
// marginal) exceeds 1 by more than a factor e^imageMassDispute (a peak
// narrower than the cells: the 3-D funnel's (v, x) pairs held 6.7, every
// other reference case's and gallery example's pair at most 1.012), or
// where its levels move by more than levelDispute at the 39 or 86 % level
// between its cells as computed (raw) and subdivided (lv). Where the pair
// rule does not stand either (ErrPairUnresolved, ErrTooLarge), no
// contours are drawn (levels 0) and a warning says why: so on the 3-D
// funnel's (x1, x2) pair, a scale mixture peaked at the origin (its image
// held 0.07 of the mass, its 39 % level 1,000 times too low against Monte
// Carlo, and its pair rule's log Z missed by 0.47). An image that holds
// too little mass is not sent to the pair rule: the short Lorenz-63
// cost's held 0.88, and its pair rule, centred on one mode of several,
// missed log Z by 0.17 after 300 ms.
func (a *analysis) pairLevelsNested(q *quadrature.Result, i, j int, lv, raw []float64, total float64) ([]float64, error) {
	disputed := !(math.Log(total) <= imageMassDispute)
	for c := 0; c < 2; c++ {
		disputed = disputed || !(math.Abs(math.Log(raw[c]/lv[c])) <= levelDispute)
	}
	if !disputed || a.ref.severalModes {
		// A pair rule centred on a mixture of several modes would miss
		// some of them.
		return lv, nil
	}
	dens, mass, err := q.PairNodes(a.ctx, i, j)
	if err != nil {
		if ctxErr := a.ctx.Err(); ctxErr != nil {
			return nil, ctxErr
		}
		// Neither the image nor the pair rule resolves the density: no
		// contours rather than wrong ones.
		a.diag.add(CodeUnresolved, SeverityWarning,
			"The contours of %s against %s are not drawn: the pair's density has a peak far narrower than its spread (as a scale mixture's at its centre), which neither the plot's cells nor a rule over the pair resolve; the shading shows the density as computed at the plot's points.",
			a.names[j], a.names[i])
		return []float64{0, 0, 0}, nil
	}
	if byNodes, ok := levelsOfNodes(dens, mass); ok {
		return byNodes, nil
	}
	return lv, nil
}

// levelsOfNodes returns the levels enclosing contourMasses of the mass
// from weighted nodes (quadrature.NodeShares), and whether each is
// positive and finite.
func levelsOfNodes(dens, mass []float64) ([]float64, bool) {
	lv := grid.Levels(dens, mass, contourMasses[:])
	for _, l := range lv {
		if !(l > 0) || math.IsInf(l, 1) {
			return nil, false
		}
	}
	return lv, true
}

// imageMassDispute is the largest log of a pair image's mass for which its
// levels stand without a pair rule (pairLevelsNested).
const imageMassDispute = 0.1

// levelDispute is the largest |log| ratio of the image's level to the
// nodes' for which the image's stands: 0.25, where a normal's differ by
// 0.08 at most and a funnel's by 0.57 and more.
const levelDispute = 0.25

// ruleMarginals returns each parameter's exact marginal (X and Exact only)
// on its plot range, and the ranges, from the nested rule (see
// plotsFromRule). They are computed once and kept (a.ruleExact): the exact
// result handed over before the fits (handOverExact) and the whole result
// draw the same curves. step is called before each parameter's.
func (a *analysis) ruleMarginals(step func(k int)) ([]Marginal1D, [][2]float64, error) {
	if a.ruleExact != nil {
		return a.ruleExact.marginals, a.ruleExact.ranges, nil
	}
	q := a.ref.quad
	d := a.d
	ranges, curves, err := a.ruleRanges(q)
	if err != nil {
		if ctxErr := a.ctx.Err(); ctxErr != nil {
			return nil, nil, ctxErr
		}
		return nil, nil, err
	}
	out := make([]Marginal1D, d)
	for k := 0; k < d; k++ {
		step(k)
		xs := evenly(ranges[k], rulePlot1D[d-1])
		m := Marginal1D{Param: k, X: xs}
		tol := walkDensityTol
		if a.ref.curvesLater != nil && a.ref.curvesLater[k] && a.costlyCurve(q) {
			tol = walkDensityTolCostly
		}
		if cv := curves[k]; cv != nil {
			m.Exact = cv.Density(xs)
		} else if dens, est, err := q.WalkDensity(k, xs); err == nil && est <= tol {
			// No curve (the marginal's own walk failed, as a funnel's
			// location's, or was not taken: see ruleRanges), but the
			// rule's walks along the parameter, summed, give its density.
			m.Exact = dens
		} else {
			// A rule over the other parameters at each plot point.
			dens, err := q.Marginal(a.ctx, k, xs)
			if err != nil {
				if ctxErr := a.ctx.Err(); ctxErr != nil {
					return nil, nil, ctxErr
				}
				return nil, nil, err
			}
			m.Exact = dens
		}
		out[k] = m
	}
	a.ruleExact = &exactPlots{marginals: out, ranges: ranges}
	return out, ranges, nil
}

// exactPlots are the exact marginals' plot points and densities, and the
// plot ranges, kept by ruleMarginals.
type exactPlots struct {
	marginals []Marginal1D
	ranges    [][2]float64
}
