package engine

import (
	"fmt"
	"math"

	"bellcheck/engine/grid"
	"bellcheck/engine/model"
	"bellcheck/engine/transform"
)

// OptionProblem is one option Analyse would refuse or could not use, and
// why.
type OptionProblem struct {
	// Param is the parameter's index in the model (-1 for the options as a
	// whole) and Name its name.
	Param int
	Name  string
	// Field is the option at fault: "points", "scale" or "box" (or
	// "candidates" or "vary" for the options as a whole).
	Field string
	// Reason says what is wrong, in words.
	Reason string
}

func (p OptionProblem) Error() string {
	if p.Param < 0 {
		return p.Reason
	}
	return "parameter " + p.Name + ": " + p.Reason
}

// CheckOptions returns the problems of opts for the checked model m before
// any work is done: the limits Analyse enforces (MaxAxisPoints, the scales
// each support allows, a box inside the support) and a box the grid cannot
// lay out in floating point (wider than the largest double, or too narrow
// for its points). An empty result means the options are usable.
func CheckOptions(m *model.Model, opts Options) []OptionProblem {
	if m == nil || len(m.Params) == 0 {
		return nil
	}
	d := len(m.Params)
	var out []OptionProblem
	if len(opts.Params) > d {
		out = append(out, OptionProblem{Param: -1, Reason: fmt.Sprintf("options for %d parameters, but the model has %d", len(opts.Params), d)})
	}
	for i, prm := range m.Params {
		if i >= len(opts.Params) {
			break
		}
		po := opts.Params[i]
		bad := func(field, format string, args ...any) {
			out = append(out, OptionProblem{Param: i, Name: prm.Name, Field: field, Reason: fmt.Sprintf(format, args...)})
		}
		if most := MaxAxisPoints(d); po.Points < 0 || po.Points > most {
			bad("points", "%d grid points; a model of %d parameters may have 1 to %d per parameter (the grid must fit in memory)", po.Points, d, most)
		}
		mp := transform.Map{Scale: ScaleOf(m, opts, i), Lo: prm.Lo, Hi: prm.Hi}
		switch po.Scale {
		case "", transform.Identity, transform.Log, transform.Logit:
		default:
			bad("scale", "unknown scale %q (identity, log or logit)", po.Scale)
			continue
		}
		if err := mp.Check(); err != nil {
			bad("scale", "the %s scale does not suit the support [%g, %g]: %v", po.Scale, prm.Lo, prm.Hi, err)
			mp = transform.Map{Scale: transform.Identity, Lo: prm.Lo, Hi: prm.Hi}
		}
		lo, hi := prm.Lo, prm.Hi
		if po.Lo != nil {
			if math.IsNaN(*po.Lo) || *po.Lo < prm.Lo || *po.Lo >= prm.Hi {
				bad("box", "box lower side %g outside the support [%g, %g]", *po.Lo, prm.Lo, prm.Hi)
				continue
			}
			lo = *po.Lo
		}
		if po.Hi != nil {
			if math.IsNaN(*po.Hi) || *po.Hi > prm.Hi || *po.Hi <= prm.Lo {
				bad("box", "box upper side %g outside the support [%g, %g]", *po.Hi, prm.Lo, prm.Hi)
				continue
			}
			hi = *po.Hi
		}
		if !(lo < hi) {
			bad("box", "box [%g, %g] is empty", lo, hi)
			continue
		}
		if po.Lo == nil || po.Hi == nil {
			continue // the search finds the other side
		}
		zl, zh := mp.FromOriginal(lo), mp.FromOriginal(hi)
		switch n := grid.AxisPoints(po.Points, d); {
		case math.IsInf(zl, 0) || math.IsInf(zh, 0):
			// A side on the support's bound, where the log or logit scale
			// the parameter is fitted on goes to infinity.
			side := lo
			if math.IsInf(zh, 0) {
				side = hi
			}
			bad("box", "box [%g, %g]: its side %g is the support's bound, infinitely far on the %s scale this parameter is fitted on; set the side inside the support, or fit it on the identity scale", lo, hi, side, mp.Scale)
		case math.IsInf(zh-zl, 0) || math.IsNaN(zh-zl):
			bad("box", "box [%g, %g] is wider than a floating-point number can hold", lo, hi)
		case !grid.Layable(zl, zh, n):
			bad("box", "box [%g, %g] is too narrow for %d grid points in floating point (the spacing must exceed 1e-9 of the bounds' size)", lo, hi, n)
		}
	}
	return append(out, checkCandidatesAndVary(m, opts)...) // candidate.go, live.go
}
