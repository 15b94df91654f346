package paramopt

import (
	"bellcheck/engine"
	"bellcheck/engine/model"
)

// TextOptions returns the analysis options a model text carries in its
// setting lines: the per-parameter settings and the constants to vary
// (Lines, Options) and the candidate Gaussians (CandidateLines,
// Candidates), checked against the model parsed from that text. Errors
// are *Error with the line and column.
func TextOptions(m *model.Model, src string) (engine.Options, error) {
	lines, err := Lines(src)
	if err != nil {
		return engine.Options{}, err
	}
	opts, err := Options(m, lines)
	if err != nil {
		return engine.Options{}, err
	}
	specs, err := CandidateLines(src)
	if err != nil {
		return engine.Options{}, err
	}
	if opts.Candidates, err = Candidates(m, specs); err != nil {
		return engine.Options{}, err
	}
	return opts, nil
}
