package ui

import (
	"context"
	"errors"
	"math"
	"time"

	"bellcheck/engine"
	"bellcheck/engine/data"
	"bellcheck/engine/model"
)

// Run is one analysis to start: its generation, the model and options.
type Run struct {
	Gen     uint64
	Model   *model.Model
	Options engine.Options
}

// Session is the calculator's state: the model text and its check, the
// options chosen per parameter, and the results of the newest finished
// analysis. Analyses are numbered by a generation counter: only the result of
// the newest requested analysis is accepted, so a slow run for an older
// model never replaces a newer one. The zero value is an empty session.
type Session struct {
	// Source is the model text as last checked.
	Source string
	// Model is Source's checked model, nil while Source has errors.
	Model *model.Model
	// Errors lists Source's problems as the parser gives them, with their
	// positions (nil when it is valid).
	Errors model.ErrorList
	// LastGood is the last valid model, kept while the text has errors.
	LastGood *model.Model

	// Result is the newest accepted result, for ResultModel; it stays
	// shown (dimmed, see Stale) while the text has errors or a newer
	// analysis runs.
	Result      *engine.Result
	ResultModel *model.Model
	// Partial reports that Result is the running analysis's early result
	// (engine.AnalyseEarly): everything but the pair plots, which follow.
	// It is not stale while that analysis runs.
	Partial bool
	// RunErr is the error of the newest analysis when it failed (not when
	// it was cancelled).
	RunErr error

	// Gen is the generation of the newest requested analysis, ResultGen
	// that of Result.
	Gen, ResultGen uint64
	// Running reports whether the newest requested analysis is still
	// running; Progress is its last report and Started its start.
	Running  bool
	Progress engine.Progress
	Started  time.Time
	// Elapsed is how long the newest finished analysis took, as seen by
	// the page, and LongestSlice the longest stretch it ran without
	// yielding to the browser.
	Elapsed, LongestSlice time.Duration

	// Data is the attached table (nil for none): its columns are named
	// vectors of the model (data.go).
	Data *data.Table
	// File is what the model text's own setting lines give.
	File FileOptions
	// Constants are the live constants' values the sliders set, by name
	// (live.go); a new text forgets them.
	Constants map[string]float64

	params ParamChoices
}

// Edit checks new model text. It reports whether the text is a valid model
// (so an analysis should start).
func (s *Session) Edit(src string) bool {
	if src != s.Source {
		s.Constants = nil
	}
	s.Source = src
	m, file, errs := parseModel(src, s.Data)
	if errs != nil {
		s.Model = nil
		s.Errors = errs
		return false
	}
	s.Model, s.Errors, s.LastGood, s.File = m, nil, m, file
	return true
}

// sourceErrors returns the parser's error as a list (an error of another
// kind at the start of the text).
func sourceErrors(err error) model.ErrorList {
	var list model.ErrorList
	if errors.As(err, &list) && len(list) > 0 {
		return list
	}
	var one *model.Error
	if errors.As(err, &one) {
		return model.ErrorList{one}
	}
	return model.ErrorList{{Pos: model.Pos{Line: 1, Col: 1}, Msg: err.Error()}}
}

// Stale reports whether the result shown is not the answer for the text and
// options now in the editor: the text has errors, a newer analysis runs, or
// the newest one failed.
func (s *Session) Stale() bool {
	running := s.Running && !(s.Partial && s.ResultGen == s.Gen)
	return s.Result != nil && (s.Errors != nil || running || s.ResultGen != s.Gen)
}

// Begin registers a new analysis of the current model and returns it; any
// earlier analysis is outdated from now on. It returns false when the text
// has errors.
func (s *Session) Begin(now time.Time) (Run, bool) {
	if s.Model == nil {
		return Run{}, false
	}
	s.Gen++
	s.Running = true
	s.Progress = engine.Progress{}
	s.Started = now
	s.RunErr = nil
	return Run{Gen: s.Gen, Model: s.runModel(), Options: s.Options()}, true
}

// Cancel marks the running analysis as abandoned (the text became invalid).
func (s *Session) Cancel() {
	if s.Running {
		s.Gen++
		s.Running = false
	}
}

// Report records progress of analysis gen; reports of outdated analyses are
// ignored. It returns whether it was recorded.
func (s *Session) Report(gen uint64, p engine.Progress) bool {
	if gen != s.Gen || !s.Running {
		return false
	}
	s.Progress = p
	return true
}

// Finish records the outcome of analysis run. It returns false, changing
// nothing, when the run is outdated or was cancelled.
func (s *Session) Finish(run Run, res *engine.Result, err error, elapsed, longest time.Duration) bool {
	if run.Gen != s.Gen {
		return false
	}
	if errors.Is(err, context.Canceled) || errors.Is(err, context.DeadlineExceeded) {
		return false
	}
	s.Running = false
	s.Elapsed, s.LongestSlice = elapsed, longest
	if err != nil {
		s.RunErr = err
		return true
	}
	if res == nil {
		s.RunErr = errors.New("the analysis returned no result")
		return true
	}
	s.Result, s.ResultModel, s.ResultGen, s.Partial = res, run.Model, run.Gen, false
	return true
}

// Early records the early result of the running analysis run (all but its
// pair plots; the analysis goes on). It returns false, changing nothing,
// when the run is outdated or no longer running.
func (s *Session) Early(run Run, res *engine.Result) bool {
	if run.Gen != s.Gen || !s.Running || res == nil {
		return false
	}
	s.Result, s.ResultModel, s.ResultGen, s.Partial = res, run.Model, run.Gen, true
	return true
}

// Param returns the options chosen for the named parameter.
func (s *Session) Param(name string) engine.ParamOptions {
	return s.params[name]
}

// SetParam sets the options of the named parameter. Options are kept by
// name, so they survive edits of the text that keep the parameter.
func (s *Session) SetParam(name string, o engine.ParamOptions) {
	if s.params == nil {
		s.params = ParamChoices{}
	}
	s.params[name] = o
}

// ResetParams forgets every parameter's options.
func (s *Session) ResetParams() { s.params = nil }

// Options returns the analysis options for the current model: each
// parameter's chosen options, with a scale its support does not allow
// dropped back to the default and a box outside the support clipped to it.
func (s *Session) Options() engine.Options {
	var o engine.Options
	o.Plots = true
	if s.Model == nil {
		return o
	}
	o.Params = make([]engine.ParamOptions, len(s.Model.Params))
	chosen := s.params.ByIndex(s.Model)
	for i, p := range s.Model.Params {
		var po engine.ParamOptions
		if i < len(s.File.Params) {
			po = s.File.Params[i]
		}
		if i < len(chosen) {
			po = over(po, chosen[i])
		}
		if po.Scale.Check(p.Lo, p.Hi) != nil {
			po.Scale = "" // the default (engine.ScaleOf)
		}
		if po.Points != 0 {
			po.Points = max(MinPoints, min(po.Points, MaxPoints, engine.MaxAxisPoints(len(s.Model.Params))))
		}
		po.Lo = clipBound(po.Lo, p.Lo, p.Hi)
		po.Hi = clipBound(po.Hi, p.Lo, p.Hi)
		if po.Lo != nil && po.Hi != nil && !(*po.Lo < *po.Hi) {
			po.Lo, po.Hi = nil, nil
		}
		o.Params[i] = po
	}
	o.Candidates, o.Vary = s.File.Candidates, s.File.Vary
	return o
}

// defaultScale is the scale parameter i of m is fitted on where neither
// the page nor the model's own lines name one (engine.ScaleOf, with the
// model's candidates).
func (s *Session) defaultScale(m *model.Model, i int) engine.Scale {
	return engine.ScaleOf(m, engine.Options{Candidates: s.File.Candidates}, i)
}

// asIsWhereUnnamed returns the options by index (as a link holds them)
// with the identity scale named for every parameter whose scale neither
// they nor the model's own lines name and whose default is another: a
// link of the first format (share.State.AsIsDefault) was made when such a
// parameter was fitted as it is.
func (s *Session) asIsWhereUnnamed(params []engine.ParamOptions) []engine.ParamOptions {
	m := s.Model
	if m == nil {
		return params
	}
	out := make([]engine.ParamOptions, len(m.Params))
	copy(out, params)
	for i := range m.Params {
		if out[i].Scale != "" || i < len(s.File.Params) && s.File.Params[i].Scale != "" {
			continue
		}
		if s.defaultScale(m, i) != engine.Identity {
			out[i].Scale = engine.Identity
		}
	}
	return out
}

// Limits on the grid points a parameter may ask for in the page (and at
// most engine.MaxAxisPoints for the model's number of parameters).
const (
	MinPoints = 8
	MaxPoints = 2001
)

func clipBound(v *float64, lo, hi float64) *float64 {
	if v == nil || math.IsNaN(*v) || math.IsInf(*v, 0) {
		return nil
	}
	x := max(lo, min(hi, *v))
	return &x
}
