package engine

import (
	"math"

	"bellcheck/engine/gauss"
	"bellcheck/engine/grid"
)

// Plot resolution: at most this many points along a 1-D marginal and along
// each axis of a pair's image (every k-th grid node, ends included).
const (
	maxPlot1D = 401
	maxPlot2D = 121
)

// contourMasses are the shares of the mass inside the drawn contours, and
// contourPoints the number of segments of each fit's ellipse.
var contourMasses = [3]float64{0.39, 0.86, 0.99}

const contourPoints = 96

// plots draws the exact marginals and each fit's on the original scale. It
// reports progress and checks for cancellation between the pieces of each
// pair (the largest 2-D grid holds 2.25 million nodes).
//
// Where the nested rule stands, the plots come from it instead
// (plotsFromRule, plots_rule.go), unless a marginal's walk did not resolve
// it while the full grid does (reference.gridCurves).
//
// beforePairs is called with the marginals before the pairs are computed
// where a.early is set and they come from the rule in 3-D or 4-D.
func (a *analysis) plots(res *Result, beforePairs func([]Marginal1D)) (*Plots, error) {
	if a.ref.onNodes() && !a.ref.gridCurves {
		if a.early == nil || a.d < 3 {
			beforePairs = nil
		}
		return a.plotsFromRule(res, beforePairs)
	}
	g := a.ref.grid
	st := &g.Stats
	pairs := st.PairMarginals()
	d := a.d
	pl := &Plots{}
	fits, cands := a.plotted(res)
	// dxdz[k][i] is dx/dz at node i of axis k.
	dxdz := make([][]float64, d)
	xs := make([][]float64, d)
	for k := 0; k < d; k++ {
		dxdz[k] = make([]float64, g.N[k])
		xs[k] = make([]float64, g.N[k])
		for i, z := range g.Nodes[k] {
			xs[k][i] = a.maps[k].ToOriginal(z)
			dxdz[k][i] = math.Exp(a.maps[k].LogJacobian(z))
		}
	}
	for k := 0; k < d; k++ {
		a.tr.at(float64(k) / float64(d+len(pairs)))
		idx := plotNodes(g.N[k], maxPlot1D)
		m := Marginal1D{Param: k}
		for _, i := range idx {
			m.X = append(m.X, xs[k][i])
			m.Exact = append(m.Exact, st.Marginals[k].Density[i]/dxdz[k][i])
		}
		for meth, q := range fits {
			if q == nil {
				continue
			}
			curve := make([]float64, len(idx))
			for j, i := range idx {
				curve[j] = q.MarginalPDF(k, g.Nodes[k][i]) / dxdz[k][i]
			}
			m.Fits[meth] = curve
		}
		if len(cands) > 0 {
			m.Candidates = make([][]float64, len(cands))
		}
		for c, q := range cands {
			if q == nil {
				continue
			}
			curve := make([]float64, len(idx))
			for j, i := range idx {
				curve[j] = q.MarginalPDF(k, g.Nodes[k][i]) / dxdz[k][i]
			}
			m.Candidates[c] = curve
		}
		pl.Marginals = append(pl.Marginals, m)
	}
	for pi, pr := range pairs {
		part := func(f float64) error {
			a.tr.at((float64(d+pi) + f) / float64(d+len(pairs)))
			return a.ctx.Err()
		}
		if err := part(0); err != nil {
			return nil, err
		}
		i, j := pr.I, pr.J
		nj := g.N[j]
		// The density on the original scale, for the levels and the image.
		orig := make([]float64, len(pr.Density))
		for u := 0; u < g.N[i]; u++ {
			for v := 0; v < nj; v++ {
				orig[u*nj+v] = pr.Density[u*nj+v] / (dxdz[i][u] * dxdz[j][v])
			}
		}
		if err := part(0.3); err != nil {
			return nil, err
		}
		lv := grid.Levels(orig, pr.Mass, contourMasses[:])
		if err := part(0.9); err != nil {
			return nil, err
		}
		m2 := Marginal2D{I: i, J: j, Levels: [3]float64{lv[0], lv[1], lv[2]}, Ellipses: Ellipses{}}
		iu, iv := plotNodes(g.N[i], maxPlot2D), plotNodes(nj, maxPlot2D)
		for _, u := range iu {
			m2.X = append(m2.X, xs[i][u])
		}
		for _, v := range iv {
			m2.Y = append(m2.Y, xs[j][v])
		}
		m2.Density = make([]float64, 0, len(iu)*len(iv))
		for _, v := range iv {
			for _, u := range iu {
				m2.Density = append(m2.Density, orig[u*nj+v])
			}
		}
		smoothPair(&m2)
		a.addEllipses(&m2, fits, cands)
		pl.Pairs = append(pl.Pairs, m2)
	}
	return pl, nil
}

// plotted returns the Gaussians the plots draw: each fit that exists by
// method, and each candidate by its index in res.Candidates (nil where it
// has no comparison); all normals on the fitting scale.
func (a *analysis) plotted(res *Result) (fits [NumMethods]*gauss.Prepared, cands []*gauss.Prepared) {
	cands = make([]*gauss.Prepared, len(res.Candidates))
	for _, fd := range a.fits {
		switch {
		case fd.candidate != "":
			if res.Candidates[fd.index].Fit != nil {
				cands[fd.index] = fd.q
			}
		case res.Fits[fd.method] != nil:
			fits[fd.method] = fd.q
		}
	}
	return fits, cands
}

// addEllipses gives the pair m2 the contours of each fit and candidate
// that exists.
func (a *analysis) addEllipses(m2 *Marginal2D, fits [NumMethods]*gauss.Prepared, cands []*gauss.Prepared) {
	for meth, q := range fits {
		if q != nil {
			m2.Ellipses[Method(meth)] = a.ellipses(q, m2.I, m2.J)
		}
	}
	if len(cands) > 0 {
		m2.CandidateEllipses = make([][3][][2]float64, len(cands))
	}
	for c, q := range cands {
		if q != nil {
			m2.CandidateEllipses[c] = a.ellipses(q, m2.I, m2.J)
		}
	}
}

// ellipses returns the fit's contours holding contourMasses of its (i, j)
// marginal, as closed polylines mapped to the original scale: on the
// fitting scale they are the normal's ellipses, and the map keeps the mass
// inside.
func (a *analysis) ellipses(q *gauss.Prepared, i, j int) [3][][2]float64 {
	var out [3][][2]float64
	for c, mass := range contourMasses {
		pts := q.Ellipse(i, j, mass, contourPoints)
		for t := range pts {
			pts[t] = [2]float64{a.maps[i].ToOriginal(pts[t][0]), a.maps[j].ToOriginal(pts[t][1])}
		}
		out[c] = pts
	}
	return out
}

// plotNodes returns node indices 0, k, 2k, ..., n-1 with at most limit of
// them: k is the smallest divisor of n-1 that fits, else the rounded step
// with the last node added.
func plotNodes(n, limit int) []int {
	if n <= limit {
		idx := make([]int, n)
		for i := range idx {
			idx[i] = i
		}
		return idx
	}
	step := 0
	for k := 1; k < n; k++ {
		if (n-1)%k == 0 && (n-1)/k+1 <= limit {
			step = k
			break
		}
	}
	var idx []int
	if step > 0 {
		for i := 0; i < n; i += step {
			idx = append(idx, i)
		}
		return idx
	}
	step = (n-1)/(limit-1) + 1
	for i := 0; i < n-1; i += step {
		idx = append(idx, i)
	}
	return append(idx, n-1)
}

// smoothPair refines a grid's pair image to about pairShown points a side
// by cubic interpolation (upsample), where both axes are evenly spaced on
// the original scale (parameters fitted as they are), so that its contours
// are drawn as smooth curves rather than the polygons of the grid's
// lattice (the long Lorenz-63 window's grid has 61 points a side). The
// levels stay those of the grid itself.
func smoothPair(m2 *Marginal2D) {
	nx, ny := len(m2.X), len(m2.Y)
	if nx < 4 || ny < 4 || max(nx, ny) >= pairShown || !evenlySpaced(m2.X) || !evenlySpaced(m2.Y) {
		return
	}
	// upsample's layout is x-major; the image's is y-major.
	dens := make([]float64, nx*ny)
	for b := 0; b < ny; b++ {
		for a := 0; a < nx; a++ {
			dens[a*ny+b] = m2.Density[b*nx+a]
		}
	}
	n := max(nx, ny)
	fx, fy, fd := upsample(dens, m2.X, m2.Y, (pairShown+n-3)/(n-1))
	m2.X, m2.Y = fx, fy
	m2.Density = make([]float64, len(fd))
	for b := range fy {
		for a := range fx {
			m2.Density[b*len(fx)+a] = fd[a*len(fy)+b]
		}
	}
}

// evenlySpaced reports whether xs are evenly spaced (to 1e-9 of the step).
func evenlySpaced(xs []float64) bool {
	step := (xs[len(xs)-1] - xs[0]) / float64(len(xs)-1)
	if !(step > 0) {
		return false
	}
	for i := 1; i < len(xs); i++ {
		if math.Abs(xs[i]-xs[i-1]-step) > 1e-9*step {
			return false
		}
	}
	return true
}
