package engine

import (
	"math"
	"sort"

	"bellcheck/engine/gauss"
	"bellcheck/engine/quadrature"
)

// Plot resolution of the nested rule's plots, by the number of parameters
// (index d-1): points along each marginal, and along each axis of a pair's
// image. Every point of a marginal or a pair is a nested rule over the
// other parameters, so the counts fall with the dimension.
var (
	rulePlot1D = [4]int{241, 201, 161, 121}
	rulePlot2D = [4]int{0, 81, 61, 41}
)

// plotTail is the share of the mass left out of each end of a plot's
// range (before widening by plotMargin of the range on each side, on the
// unconstrained scale).
const (
	plotTail   = 5e-4
	plotMargin = 0.15
)

// plotsFromRule draws the exact marginals and pair marginals from the
// nested rule (quadrature.Result.Marginal and Pair: at each plot point a
// nested rule over the other parameters) on plot ranges fitted to the
// posterior's width, and each fit's curves and ellipses, all on the
// original scale. The range of a parameter runs between its 0.05 % and
// 99.95 % quantiles (from the rule's node set, weighted), widened by 15 %
// of that span on each side on the unconstrained scale and mapped to the
// original (so it stays inside the support); the points are evenly spaced
// on the original scale.
func (a *analysis) plotsFromRule(res *Result) (*Plots, error) {
	q := a.ref.quad
	d := a.d
	pl := &Plots{}
	var fits [NumMethods]*gauss.Prepared
	for _, fd := range a.fits {
		if res.Fits[fd.method] != nil {
			fits[fd.method] = fd.q
		}
	}
	ranges := a.ruleRanges(q)
	pairs := d * (d - 1) / 2
	parts := float64(d + pairs)
	for k := 0; k < d; k++ {
		a.tr.at(float64(k) / parts)
		xs := evenly(ranges[k], rulePlot1D[d-1])
		dens, err := q.Marginal(a.ctx, k, xs)
		if err != nil {
			if ctxErr := a.ctx.Err(); ctxErr != nil {
				return nil, ctxErr
			}
			return nil, err
		}
		m := Marginal1D{Param: k, X: xs, Exact: dens}
		for meth, g := range fits {
			if g == nil {
				continue
			}
			curve := make([]float64, len(xs))
			for j, x := range xs {
				z := a.maps[k].FromOriginal(x)
				if math.IsNaN(z) || math.IsInf(z, 0) {
					continue
				}
				curve[j] = g.MarginalPDF(k, z) / math.Exp(a.maps[k].LogJacobian(z))
			}
			m.Fits[meth] = curve
		}
		pl.Marginals = append(pl.Marginals, m)
	}
	pi := 0
	for i := 0; i < d; i++ {
		for j := i + 1; j < d; j++ {
			a.tr.at(float64(d+pi) / parts)
			pi++
			if err := a.ctx.Err(); err != nil {
				return nil, err
			}
			n := rulePlot2D[d-1]
			xs, ys := evenly(ranges[i], n), evenly(ranges[j], n)
			dens, err := q.Pair(a.ctx, i, j, xs, ys)
			if err != nil {
				if ctxErr := a.ctx.Err(); ctxErr != nil {
					return nil, ctxErr
				}
				return nil, err
			}
			lv, _ := quadrature.Levels(dens, xs, ys, contourMasses[:])
			m2 := Marginal2D{I: i, J: j, X: xs, Y: ys, Levels: [3]float64{lv[0], lv[1], lv[2]}, Ellipses: Ellipses{}}
			// Pair gives (xs[u], ys[v]) at u*len(ys)+v; the page wants
			// Density[v*len(xs)+u].
			m2.Density = make([]float64, len(xs)*len(ys))
			for u := range xs {
				for v := range ys {
					m2.Density[v*len(xs)+u] = dens[u*len(ys)+v]
				}
			}
			for meth, g := range fits {
				if g != nil {
					m2.Ellipses[Method(meth)] = a.ellipses(g, i, j)
				}
			}
			pl.Pairs = append(pl.Pairs, m2)
		}
	}
	return pl, nil
}

// ruleRanges returns each parameter's plot range on the original scale
// (see plotsFromRule).
func (a *analysis) ruleRanges(q *quadrature.Result) [][2]float64 {
	d := a.d
	ns := q.Nodes
	n := ns.Len()
	type node struct{ z, m float64 }
	nodes := make([]node, n)
	z := make([]float64, d)
	out := make([][2]float64, d)
	for k := 0; k < d; k++ {
		total := 0.0
		for i := 0; i < n; i++ {
			ns.Point(i, z)
			m := math.Exp(ns.LogWeight(i) + ns.LogP(i) - q.LogZ)
			if math.IsNaN(m) {
				m = 0
			}
			nodes[i] = node{z[k], m}
			total += m
		}
		sort.Slice(nodes, func(i, j int) bool { return nodes[i].z < nodes[j].z })
		lo, hi := nodes[0].z, nodes[n-1].z
		acc := 0.0
		for _, nd := range nodes {
			acc += nd.m
			if acc >= plotTail*total {
				lo = nd.z
				break
			}
		}
		acc = 0
		for i := n - 1; i >= 0; i-- {
			acc += nodes[i].m
			if acc >= plotTail*total {
				hi = nodes[i].z
				break
			}
		}
		if !(hi > lo) {
			hi, lo = hi+0.5, lo-0.5
		}
		span := hi - lo
		lo, hi = lo-plotMargin*span, hi+plotMargin*span
		mp := a.ref.quadMaps[k]
		out[k] = [2]float64{mp.ToOriginal(lo), mp.ToOriginal(hi)}
	}
	return out
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
