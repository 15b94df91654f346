package figure

import (
	"math"

	"bellcheck/app/plot"
	"bellcheck/engine"
)

// A candidate Gaussian of the user's may lie partly or wholly outside the
// range the exact density and the fits give a plot (a derivation with a
// wrong sign, say): the plot then widens to show it, beyond the plot's grid
// if need be, by at most maxReach times the width it had without the
// candidates on each side, so that a far-off candidate does not shrink the
// posterior to a dot.
const maxReach = 4

// reachZ is how far a candidate's view reaches from its mean, in its sds
// along the axis: the projection of its outer (99 %) contour, sqrt(-2 log
// 0.01) = 3.035 sds (a bivariate normal's contour holding mass c has
// squared Mahalanobis radius -2 log(1 - c)).
var reachZ = math.Sqrt(-2 * math.Log(1-Masses[2]))

// Spread is a candidate's normal marginal along one axis: its mean and sd
// on the original scale. A zero SD means it is not a normal there (the
// parameter is fitted on a log or logit scale): the candidate is then drawn
// from its curve on the plot's grid alone.
type Spread struct {
	Mean, SD float64
}

// known reports whether the spread describes a normal.
func (s Spread) known() bool {
	return s.SD > 0 && !math.IsInf(s.SD, 0) && !math.IsNaN(s.Mean) && !math.IsInf(s.Mean, 0)
}

// spreadAt returns the k-th spread of ss (zero where there is none).
func spreadAt(ss []Spread, k int) Spread {
	if k < len(ss) {
		return ss[k]
	}
	return Spread{}
}

// pdf is the normal density of the spread at x.
func (s Spread) pdf(x float64) float64 {
	u := (x - s.Mean) / s.SD
	return math.Exp(-u*u/2) / (s.SD * math.Sqrt(2*math.Pi))
}

// curve samples the spread's density at n points across [lo, hi].
func (s Spread) curve(lo, hi float64, n int) (xs, ys []float64) {
	xs, ys = make([]float64, n), make([]float64, n)
	for i := range n {
		x := lo + (hi-lo)*float64(i)/float64(n-1)
		xs[i], ys[i] = x, s.pdf(x)
	}
	return xs, ys
}

// spreadPoints is the number of points a candidate's normal marginal is
// drawn with.
const spreadPoints = 241

// reach widens the view [lo, hi] to hold [a, b] (with the usual padding on
// a side it widens), by at most maxReach times its width on each side.
func reach(lo, hi, a, b float64) (float64, float64) {
	w := hi - lo
	if !(w > 0) || math.IsNaN(a) || math.IsNaN(b) {
		return lo, hi
	}
	nlo, nhi := lo, hi
	if a < lo {
		nlo = a
	}
	if b > hi {
		nhi = b
	}
	pad := viewPad * (nhi - nlo)
	if nlo < lo {
		nlo = max(nlo-pad, lo-maxReach*w)
	}
	if nhi > hi {
		nhi = min(nhi+pad, hi+maxReach*w)
	}
	return nlo, nhi
}

// candidateReach widens a marginal's view [lo, hi] to hold each shown
// candidate: mean ± reachZ sds where its spread is known, else where its
// curve on the grid holds its mass (within the grid).
func candidateReach(m *engine.Marginal1D, o Options, lo, hi float64) (float64, float64) {
	if o.HideCandidates {
		return lo, hi
	}
	a, b := math.Inf(1), math.Inf(-1)
	for k, ys := range m.Candidates {
		if s := spreadAt(o.CandidateX, k); s.known() {
			a, b = min(a, s.Mean-reachZ*s.SD), max(b, s.Mean+reachZ*s.SD)
			continue
		}
		if ys == nil {
			continue
		}
		if l, h, ok := span(m.X, ys, fitTail); ok {
			a, b = min(a, l), max(b, h)
		}
	}
	if a > b {
		return lo, hi
	}
	return reach(lo, hi, a, b)
}

// candidateCurve returns the k-th candidate's marginal as drawn: its
// normal across the view where its spread is known, else its curve on the
// grid (nil for none).
func candidateCurve(m *engine.Marginal1D, k int, s Spread, lo, hi float64) (xs, ys []float64) {
	if s.known() && hi > lo {
		return s.curve(lo, hi, spreadPoints)
	}
	if k < len(m.Candidates) && m.Candidates[k] != nil {
		return m.X, m.Candidates[k]
	}
	return nil, nil
}

// pairCandidateReach widens a pair's view to hold each shown candidate's
// outer contour (which lies beyond the grid where the candidate does).
func pairCandidateReach(p *engine.Marginal2D, o Options, xlo, xhi, ylo, yhi float64) (float64, float64, float64, float64) {
	if o.HideCandidates {
		return xlo, xhi, ylo, yhi
	}
	ax, bx, ay, by := math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)
	for _, lines := range p.CandidateEllipses {
		for _, pt := range lines[2] {
			if finiteNum(pt[0]) && finiteNum(pt[1]) {
				ax, bx = min(ax, pt[0]), max(bx, pt[0])
				ay, by = min(ay, pt[1]), max(by, pt[1])
			}
		}
	}
	if ax > bx || ay > by {
		return xlo, xhi, ylo, yhi
	}
	xlo, xhi = reach(xlo, xhi, ax, bx)
	ylo, yhi = reach(ylo, yhi, ay, by)
	return xlo, xhi, ylo, yhi
}

// PairView returns the ranges a pair's plot shows when no view is fixed:
// where the exact mass and the shown fits' outer contours are (within the
// grid), widened for the candidates' outer contours.
func PairView(p *engine.Marginal2D, o Options) (xlo, xhi, ylo, yhi float64, ok bool) {
	nx, ny := len(p.X), len(p.Y)
	if nx < 2 || ny < 2 || len(p.Density) != nx*ny || !(p.X[nx-1] > p.X[0]) || !(p.Y[ny-1] > p.Y[0]) {
		return 0, 0, 0, 0, false
	}
	ex, ey := pairMarginals(nx, ny, p.Density)
	xlo, xhi = viewOf(p.X, ex, nil)
	ylo, yhi = viewOf(p.Y, ey, nil)
	for _, meth := range plot.Fits {
		if lines, ok := ellipsesOf(p, meth); ok && o.shown(meth) {
			xlo, xhi = extendByPolylines(xlo, xhi, p.X[0], p.X[nx-1], 0, lines[2:])
			ylo, yhi = extendByPolylines(ylo, yhi, p.Y[0], p.Y[ny-1], 1, lines[2:])
		}
	}
	xlo, xhi, ylo, yhi = pairCandidateReach(p, o, xlo, xhi, ylo, yhi)
	return xlo, xhi, ylo, yhi, true
}

func finiteNum(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }
