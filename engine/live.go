package engine

import (
	"fmt"
	"math"
	"strings"

	"bellcheck/engine/model"
)

// Vary marks a scalar constant of the model (model.Model.Constant) as one
// the page may move: a slider from Lo to Hi. The analysis itself uses the
// constant's value in the model; model.WithConstant gives the model with
// another value.
type Vary struct {
	Name string  `json:"name"`
	Lo   float64 `json:"lo"`
	Hi   float64 `json:"hi"`
}

// LiveConstant is a constant marked to vary, as the Result reports it: its
// value in this analysis and its range.
type LiveConstant struct {
	Name  string  `json:"name"`
	Value float64 `json:"value"`
	Lo    float64 `json:"lo"`
	Hi    float64 `json:"hi"`
}

// liveConstants checks the options' constants to vary against the model
// (part of the setup) and returns them with their values.
func (a *analysis) liveConstants() ([]LiveConstant, error) {
	var out []LiveConstant
	seen := map[string]bool{}
	for _, v := range a.opts.Vary {
		val, err := a.m.Constant(v.Name)
		if err != nil {
			return nil, fmt.Errorf("%w: vary %s: %v", ErrOptions, v.Name, strings.TrimPrefix(err.Error(), "model: "))
		}
		if !finite(v.Lo) || !finite(v.Hi) || !(v.Lo < v.Hi) {
			return nil, fmt.Errorf("%w: vary %s: the range [%v, %v] must be finite with its lower end below its upper end", ErrOptions, v.Name, v.Lo, v.Hi)
		}
		if seen[v.Name] {
			return nil, fmt.Errorf("%w: vary %s is given twice", ErrOptions, v.Name)
		}
		seen[v.Name] = true
		out = append(out, LiveConstant{Name: v.Name, Value: val, Lo: v.Lo, Hi: v.Hi})
	}
	return out, nil
}

// fillCosts gives each mode the model's cost J = -log p there, for a model
// given as a cost: the log-density on the fitting scale less the
// log-Jacobian of each parameter's map, negated.
func (a *analysis) fillCosts(res *Result) {
	if res.Form != "cost" {
		return
	}
	for i := range res.Modes {
		md := &res.Modes[i]
		lp := md.LogDensity
		for k, z := range md.FittingScale.X {
			if k < len(a.maps) {
				lp -= a.maps[k].LogJacobian(z)
			}
		}
		j := -lp
		if math.IsNaN(j) {
			continue
		}
		md.Cost = &j
	}
}

// capitalise returns s with its first letter upper case.
func capitalise(s string) string {
	if s == "" {
		return s
	}
	return strings.ToUpper(s[:1]) + s[1:]
}

// checkCandidatesAndVary returns CheckOptions' problems with the options'
// candidates and constants to vary: what Analyse would refuse.
func checkCandidatesAndVary(m *model.Model, opts Options) []OptionProblem {
	var out []OptionProblem
	bad := func(field, reason string) {
		out = append(out, OptionProblem{Param: -1, Field: field, Reason: reason})
	}
	names := make([]string, len(m.Params))
	for i, p := range m.Params {
		names[i] = p.Name
	}
	if len(opts.Candidates) > MaxCandidates {
		bad("candidates", fmt.Sprintf("%d candidates; at most %d", len(opts.Candidates), MaxCandidates))
	}
	seen := map[string]bool{}
	for _, c := range opts.Candidates {
		if err := CheckCandidate(c, names); err != nil {
			bad("candidates", err.Error())
			continue
		}
		if seen[c.Name] {
			bad("candidates", "two candidates are named "+c.Name)
		}
		seen[c.Name] = true
		for i := range names {
			if sc := ScaleOf(m, opts, i); !sc.IsIdentity() && !c.FittingScale {
				bad("candidates", fmt.Sprintf("candidate %s: %s is fitted on the %s scale, but the candidate is a normal on the original scale", c.Name, names[i], sc))
				break
			}
		}
	}
	seenVary := map[string]bool{}
	for _, v := range opts.Vary {
		if _, err := m.Constant(v.Name); err != nil {
			bad("vary", "vary "+v.Name+": "+strings.TrimPrefix(err.Error(), "model: "))
			continue
		}
		if !finite(v.Lo) || !finite(v.Hi) || !(v.Lo < v.Hi) {
			bad("vary", fmt.Sprintf("vary %s: the range [%v, %v] must be finite with its lower end below its upper end", v.Name, v.Lo, v.Hi))
		}
		if seenVary[v.Name] {
			bad("vary", "vary "+v.Name+" is given twice")
		}
		seenVary[v.Name] = true
	}
	return out
}
