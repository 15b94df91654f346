package ui

import (
	"errors"

	"bellcheck/engine"
	"bellcheck/engine/data"
	"bellcheck/engine/model"
	"bellcheck/engine/paramopt"
)

// FileOptions are the options a model text carries in its own setting
// lines (#@ scale, points, box, vary, gaussian): the same lines the command
// line reads, so a model file analyses on the page as it does there.
type FileOptions struct {
	// Params are the per-parameter options, by index (nil when none).
	Params []engine.ParamOptions
	// Candidates are the user's own Gaussians.
	Candidates []engine.Candidate
	// Vary are the constants marked to move with a slider.
	Vary []engine.Vary
}

// parseModel checks src with the attached table (nil for none) and reads
// its setting lines against the model, as the command line does: the
// model first, then the lines in order. A setting line's problem is an
// error at its place in the text, like a model error.
func parseModel(src string, tb *data.Table) (*model.Model, FileOptions, model.ErrorList) {
	var vectors []model.Data
	if tb != nil {
		vectors = tb.Vectors()
	}
	m, err := model.ParseWith(src, vectors)
	if err != nil {
		return nil, FileOptions{}, sourceErrors(err)
	}
	lines, err := paramopt.Lines(src)
	if err != nil {
		return nil, FileOptions{}, settingErrors(err)
	}
	o, err := paramopt.Options(m, lines)
	if err != nil {
		return nil, FileOptions{}, settingErrors(err)
	}
	specs, err := paramopt.CandidateLines(src)
	if err == nil {
		o.Candidates, err = paramopt.Candidates(m, specs)
	}
	if err != nil {
		return nil, FileOptions{}, settingErrors(err)
	}
	return m, FileOptions{Params: o.Params, Candidates: o.Candidates, Vary: o.Vary}, nil
}

// settingErrors turns a setting line's error into the editor's error list.
func settingErrors(err error) model.ErrorList {
	var e *paramopt.Error
	if errors.As(err, &e) && e.Line > 0 {
		return model.ErrorList{{Pos: model.Pos{Line: e.Line, Col: max(1, e.Col)}, Msg: e.Msg,
			Hint: "a line starting with #@ sets an option of the analysis (see the README's \"Settings in the model text\")"}}
	}
	return model.ErrorList{{Pos: model.Pos{Line: 1, Col: 1}, Msg: err.Error()}}
}

// over returns the file's options for one parameter with the user's
// choices on the page laid over them, field by field (as the command
// line's flags override a file's lines).
func over(file, chosen engine.ParamOptions) engine.ParamOptions {
	if chosen.Scale != "" {
		file.Scale = chosen.Scale
	}
	if chosen.Points != 0 {
		file.Points = chosen.Points
	}
	if chosen.Lo != nil {
		file.Lo = chosen.Lo
	}
	if chosen.Hi != nil {
		file.Hi = chosen.Hi
	}
	return file
}
