package engine

import (
	"fmt"
	"math"
	"slices"
	"strings"

	"bellcheck/engine/eval"
	"bellcheck/engine/grid"
	"bellcheck/engine/model"
	"bellcheck/engine/target"
	"bellcheck/engine/transform"
)

// problem is what the setup stage hands on: the model compiled, checked
// against the options and wrapped on the fitting scale.
type problem struct {
	d      int
	names  []string
	maps   []transform.Map
	scales []Scale
	ev     *eval.Evaluator
	p      target.Density // on the fitting scale
	pw     *watched       // p, reporting progress from inside the fits
	// bounds and pinned are the box's limits on the fitting scale: the
	// support where finite and the sides the user set (pinned).
	bounds grid.Box
	pinned [][2]bool
	// modeLo and modeHi are the support on the fitting scale.
	modeLo, modeHi []float64
	// bounded reports a finite support bound on the fitting scale.
	bounded []bool
}

// setup checks the options, compiles the model and wraps it on the fitting
// scale.
func (a *analysis) setup() error {
	if a.m == nil || len(a.m.Params) == 0 {
		return ErrNoModel
	}
	d := len(a.m.Params)
	a.d = d
	if len(a.opts.Params) > d {
		return fmt.Errorf("%w: options for %d parameters, but the model has %d", ErrOptions, len(a.opts.Params), d)
	}
	ev, err := eval.Compile(a.m)
	if err != nil {
		return err
	}
	a.ev = ev
	a.unusedParams()
	a.maps = make([]transform.Map, d)
	a.scales = make([]Scale, d)
	a.bounds = grid.Box{Lo: make([]float64, d), Hi: make([]float64, d)}
	a.pinned = make([][2]bool, d)
	a.modeLo, a.modeHi = make([]float64, d), make([]float64, d)
	a.bounded = make([]bool, d)
	allIdentity := true
	for i, prm := range a.m.Params {
		a.names = append(a.names, prm.Name)
		po := ParamOptions{}
		if i < len(a.opts.Params) {
			po = a.opts.Params[i]
		}
		if po.Points < 0 {
			return fmt.Errorf("%w: parameter %s: %d grid points", ErrOptions, prm.Name, po.Points)
		}
		if most := MaxAxisPoints(d); po.Points > most {
			return fmt.Errorf("%w: parameter %s: %d grid points, more than the %d a model of %d parameters may have (the grid must fit in memory)", ErrOptions, prm.Name, po.Points, most, d)
		}
		sc := ScaleOf(a.m, a.opts, i)
		if !slices.Contains(transform.Scales, sc) {
			return fmt.Errorf("%w: parameter %s: unknown scale %q (want identity, log or logit)", ErrOptions, prm.Name, string(sc))
		}
		mp := transform.Map{Scale: sc, Lo: prm.Lo, Hi: prm.Hi}
		if err := mp.Check(); err != nil {
			return fmt.Errorf("%w: parameter %s in [%g, %g]: %v", ErrOptions, prm.Name, prm.Lo, prm.Hi, err)
		}
		if sc != Identity {
			allIdentity = false
		}
		a.maps[i] = mp
		a.scales[i] = sc
		// The user's box, on the original scale.
		lo, hi := prm.Lo, prm.Hi
		var userLo, userHi bool
		if po.Lo != nil && !math.IsInf(*po.Lo, 0) {
			if math.IsNaN(*po.Lo) || *po.Lo < prm.Lo || *po.Lo >= prm.Hi {
				return fmt.Errorf("%w: parameter %s: box lower side %g outside the support [%g, %g]", ErrOptions, prm.Name, *po.Lo, prm.Lo, prm.Hi)
			}
			lo, userLo = *po.Lo, true
		}
		if po.Hi != nil && !math.IsInf(*po.Hi, 0) {
			if math.IsNaN(*po.Hi) || *po.Hi > prm.Hi || *po.Hi <= prm.Lo {
				return fmt.Errorf("%w: parameter %s: box upper side %g outside the support [%g, %g]", ErrOptions, prm.Name, *po.Hi, prm.Lo, prm.Hi)
			}
			hi, userHi = *po.Hi, true
		}
		if !(lo < hi) {
			return fmt.Errorf("%w: parameter %s: box [%g, %g] is empty", ErrOptions, prm.Name, lo, hi)
		}
		// On the fitting scale.
		zl, zh := mp.FromOriginal(lo), mp.FromOriginal(hi)
		a.bounds.Lo[i], a.bounds.Hi[i] = zl, zh
		a.pinned[i] = [2]bool{userLo && !math.IsInf(zl, 0), userHi && !math.IsInf(zh, 0)}
		a.modeLo[i], a.modeHi[i] = mp.FromOriginal(prm.Lo), mp.FromOriginal(prm.Hi)
		if sc == Identity {
			a.bounded[i] = !math.IsInf(prm.Lo, 0) || !math.IsInf(prm.Hi, 0)
		}
	}
	a.p = ev
	if !allIdentity {
		w, err := transform.Wrap(ev, a.maps)
		if err != nil {
			return fmt.Errorf("%w: %v", ErrOptions, err)
		}
		a.p = w
	}
	a.pw = &watched{Density: a.p, tick: func(int) {}}
	a.scout = a.scout && a.ruleExpected()
	return nil
}

// scoutPoints are the grid's points per axis, by the number of
// parameters, where the nested rule is expected to give the exact results
// (every parameter has an unconstrained scale, the user set neither a box
// nor points): the grid then only scouts, for the box, the peaks the mode
// search starts from and the tails' verdicts. Where the rule does not
// stand, the analysis runs again on the default grid (errFullGrid). In
// 1-D, 1,001 (at 201 a mixture's component of sd 0.05 was not resolved,
// and the check of the rule against the grid did not apply). In 2-D, 81 a
// side: at 121 the scouting grid took 18 % of the 2-D dose example's
// analysis, and at 61 the banana's plotted marginals moved. In 3-D and 4-D,
// 31 and 11 a side (29,791 and 14,641 points; the 4-D counts benchmark's
// rule takes 2e5): every reference case's and gallery example's exact
// results were the same to 1e-12 as at 41 and 15, where the 3-D sensor
// benchmark's grid stage took 12 % of it. A cost (a data-assimilation
// model) scouts with costScoutPoints: its grid's lesser peaks also start
// the search for other local minima (stage_optima.go), which at 31 a side
// in 3-D lost one of the short Lorenz-63 window's.
var (
	scoutPoints     = [4]int{1001, 81, 31, 11}
	costScoutPoints = [4]int{1001, 81, 41, 15}
)

// points returns the grid points along each axis: those the user asked
// for (0 for the default), or the scouting grid's.
func (a *analysis) points() []int {
	scout := scoutPoints
	if a.m.Form == model.Cost {
		scout = costScoutPoints
	}
	pts := make([]int, a.d)
	for i := range pts {
		if i < len(a.opts.Params) {
			pts[i] = a.opts.Params[i].Points
		}
		if a.scout && pts[i] == 0 {
			pts[i] = scout[min(a.d, 4)-1]
		}
	}
	return pts
}

// ruleExpected reports whether the nested rule can give the exact
// results: it is on, every parameter's support has an unconstrained scale
// (the whole line, [lo, inf] or [lo, hi]) and the user set no box and no
// grid points.
func (a *analysis) ruleExpected() bool {
	if !useQuadrature {
		return false
	}
	for k, prm := range a.m.Params {
		if a.pinned[k][0] || a.pinned[k][1] {
			return false
		}
		if math.IsInf(prm.Lo, -1) && !math.IsInf(prm.Hi, 1) {
			return false
		}
		if k < len(a.opts.Params) && a.opts.Params[k].Points != 0 {
			return false
		}
	}
	return true
}

// unusedParams warns of each declared parameter that no expression of the
// model uses (the density is flat along it, so it is improper), and of each
// implicit parameter whose name looks like a misspelling of a declared
// parameter or a definition (a parameter of its own, the likely cause).
func (a *analysis) unusedParams() {
	told := map[string]bool{}
	for _, prm := range a.m.Params {
		if !prm.Declared || prm.Used {
			continue
		}
		msg := fmt.Sprintf("%s is declared (line %d) but no expression of the model uses it, so the density is flat along it and improper: give it a prior (a term such as ld_normal(%s, 0, 10)) or remove its line.",
			prm.Name, prm.At.Line, prm.Name)
		if look := a.m.Lookalikes(prm.Name); len(look) > 0 {
			msg += fmt.Sprintf(" %s, used without a param line and so a parameter of its own, looks like a misspelling of it.", list(look))
			for _, n := range look {
				told[n] = true
			}
		}
		a.diag.add(CodeUnusedParam, SeverityError, "%s", msg)
	}
	for _, prm := range a.m.Params {
		if prm.Declared || told[prm.Name] {
			continue
		}
		if like := a.m.Resembles(prm.Name); len(like) > 0 {
			a.diag.add(CodeImplicitLookalike, SeverityWarning,
				"%s (line %d, column %d) is used without a param line, so it is a parameter of its own: did you mean %s?",
				prm.Name, prm.At.Line, prm.At.Col, orList(like))
		}
	}
}

// orList joins names as "a", "a or b", "a, b or c".
func orList(names []string) string {
	if len(names) < 2 {
		return strings.Join(names, "")
	}
	return strings.Join(names[:len(names)-1], ", ") + " or " + names[len(names)-1]
}
