package engine

import (
	"fmt"
	"math"
	"slices"

	"bellcheck/engine/fit"
	"bellcheck/engine/grid"
	"bellcheck/engine/model"
)

// maxLesserStarts bounds the grid's lesser peaks polished in search of a
// cost's other local minima.
const maxLesserStarts = 24

// lesserMass is the basin mass below which a grid peak is a candidate for
// a local minimum without posterior mass.
const lesserMass = 1e-6

// lesserOptima looks for a cost's local minima that hold no posterior
// mass: the mode search polishes only the grid's peaks that hold 1e-3 of
// the mass, and a minimum far higher than the deepest holds none, yet a
// minimiser started near it stops there (a chaotic model over a long
// assimilation window has many: Pires, Vautard and Talagrand 1996, Tellus
// A 48). For a cost model, the highest of the other peaks (up to
// maxLesserStarts) of the peaks whose basins hold less than lesserMass are
// polished too; the distinct local minima they reach
// beside the modes, and the modes that hold no mass (massless: minima the
// mode search reached from the grid's highest points), are reported in the
// local_optima note. A density given
// as log p gets no such note: there the modes are what matters.
func (a *analysis) lesserOptima(rest []grid.Peak, massless []fit.Mode) error {
	if a.m.Form != model.Cost || len(a.modes.fitModes) == 0 || (len(rest) == 0 && len(massless) == 0) {
		return nil
	}
	// Peaks whose basins hold mass lie on the posterior's own ridges and
	// polish to its modes; the others are candidates.
	rest = slices.DeleteFunc(slices.Clone(rest), func(p grid.Peak) bool { return p.Mass >= lesserMass })
	slices.SortStableFunc(rest, func(p, q grid.Peak) int {
		switch {
		case p.LogP > q.LogP:
			return -1
		case q.LogP > p.LogP:
			return 1
		}
		return 0
	})
	sd := a.ref.fitting.SD
	found := append([]fit.Mode(nil), massless...)
	for i, pk := range rest {
		if i == maxLesserStarts {
			break
		}
		m, ok, err := a.searchFrom(pk.Point)
		if err != nil {
			return err
		}
		if !ok || !m.Converged || !m.PositiveDefinite || m.OnBound || math.IsNaN(m.LogDensity) || math.IsInf(m.LogDensity, 0) {
			continue
		}
		// A minimum reported must lie at a point the original scale can
		// hold, and above the deepest by more than rounding (one as deep
		// is a mode the search missed, not a lesser minimum).
		if !a.finiteOriginal(m.X) || !(a.costAt(m)-a.costAt(a.modes.fitModes[0]) > 1e-9*(1+math.Abs(a.costAt(a.modes.fitModes[0])))) {
			continue
		}
		known := false
		for _, o := range a.modes.fitModes {
			known = known || sameMode(o.X, m.X, sd, a.ref.grid)
		}
		for _, o := range found {
			known = known || sameMode(o.X, m.X, sd, a.ref.grid)
		}
		if !known {
			found = append(found, m)
		}
	}
	if len(found) == 0 {
		return nil
	}
	next := found[0]
	for _, m := range found {
		if m.LogDensity > next.LogDensity {
			next = m
		}
	}
	deepest := a.modes.fitModes[0]
	others := "one other local minimum"
	if len(found) > 1 {
		others = fmt.Sprintf("%d other local minima", len(found))
	}
	a.diag.add(CodeLocalOptima, SeverityInfo,
		"Besides its deepest minimum the cost has at least %s, found by the mode search from the grid's peaks; the deepest of them lies at %s, higher by %.3g in J. They hold no posterior mass, but a minimiser started near one stops there.",
		others, a.pointString(next.X), a.costAt(next)-a.costAt(deepest))
	return nil
}

// finiteOriginal reports whether the point z of the fitting scale maps to
// finite values on the original scale.
func (a *analysis) finiteOriginal(z []float64) bool {
	for k, v := range z {
		if x := a.maps[k].ToOriginal(v); math.IsNaN(x) || math.IsInf(x, 0) {
			return false
		}
	}
	return true
}

// costAt returns the cost J at a mode on the fitting scale: -log p on the
// original scale (the fitting scale's log-Jacobian taken out).
func (a *analysis) costAt(m fit.Mode) float64 {
	lp := m.LogDensity
	for k, z := range m.X {
		lp -= a.maps[k].LogJacobian(z)
	}
	return -lp
}
