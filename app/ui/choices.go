package ui

import (
	"bellcheck/engine"
	"bellcheck/engine/model"
)

// ParamChoices are the options the user chose for the parameters, keyed by
// parameter name, so they survive edits of the text that keep the
// parameter. The engine and the link keep options by the parameter's index
// in a model; ByIndex and ChoicesOf are the one place where the two keys
// meet.
type ParamChoices map[string]engine.ParamOptions

// ByIndex returns the options in the order of m's parameters, or nil when m
// is nil or no parameter has any option set.
func (c ParamChoices) ByIndex(m *model.Model) []engine.ParamOptions {
	if m == nil {
		return nil
	}
	out := make([]engine.ParamOptions, len(m.Params))
	empty := true
	for i, p := range m.Params {
		out[i] = c[p.Name]
		if out[i] != (engine.ParamOptions{}) {
			empty = false
		}
	}
	if empty {
		return nil
	}
	return out
}

// ChoicesOf keys options given in the order of m's parameters by name;
// options beyond m's parameters are dropped, and so is all of it when m is
// nil (a text with errors names no parameter).
func ChoicesOf(m *model.Model, byIndex []engine.ParamOptions) ParamChoices {
	c := ParamChoices{}
	if m == nil {
		return c
	}
	for i, p := range m.Params {
		if i < len(byIndex) && byIndex[i] != (engine.ParamOptions{}) {
			c[p.Name] = byIndex[i]
		}
	}
	return c
}

// For returns the options of m's parameters that are set, by name.
func (c ParamChoices) For(m *model.Model) ParamChoices {
	out := ParamChoices{}
	if m == nil {
		return out
	}
	for _, p := range m.Params {
		if o := c[p.Name]; o != (engine.ParamOptions{}) {
			out[p.Name] = o
		}
	}
	return out
}

// Choices returns the options chosen for the parameters of m (the current
// model, or the last valid one while the text has errors), by name.
func (s *Session) Choices(m *model.Model) ParamChoices { return s.params.For(m) }

// SetChoices replaces every parameter's options.
func (s *Session) SetChoices(c ParamChoices) {
	s.params = ParamChoices{}
	for name, o := range c {
		s.params[name] = o
	}
}
