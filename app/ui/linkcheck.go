package ui

import (
	"strings"

	"bellcheck/app/share"
	"bellcheck/engine"
	"bellcheck/engine/model"
)

// LinkProblems returns, in words, the options of a link that the engine
// would refuse for the link's model (engine.CheckOptions: the points a
// model of its size may have, the scales its supports allow, a box inside
// the support that a grid can be laid on). A model with errors gives none:
// its errors are shown in the editor.
func LinkProblems(st share.State) []string {
	m, err := model.Parse(st.Model)
	if err != nil {
		return nil
	}
	var out []string
	for _, p := range engine.CheckOptions(m, engine.Options{Params: st.Params}) {
		out = append(out, model.Visible(p.Error()))
	}
	return append(out, constantProblems(st)...) // live.go
}

// usableOptions returns the link's options with every option the engine
// would refuse set back to its default.
func usableOptions(m *model.Model, params []engine.ParamOptions) []engine.ParamOptions {
	if m == nil {
		return params // a text with errors: its options cannot be named
	}
	if len(params) > len(m.Params) {
		params = params[:len(m.Params)]
	}
	out := append([]engine.ParamOptions(nil), params...)
	for _, p := range engine.CheckOptions(m, engine.Options{Params: out}) {
		if p.Param < 0 || p.Param >= len(out) {
			continue
		}
		switch p.Field {
		case "points":
			out[p.Param].Points = 0
		case "scale":
			out[p.Param].Scale = ""
		case "box":
			out[p.Param].Lo, out[p.Param].Hi = nil, nil
		}
	}
	// A scale dropped may make the box fit (or not): check once more.
	for _, p := range engine.CheckOptions(m, engine.Options{Params: out}) {
		if p.Param >= 0 && p.Param < len(out) {
			out[p.Param] = engine.ParamOptions{}
		}
	}
	return out
}

// linkNotice adds the link's refused options, if any, to the notice n.
func linkNotice(n Notice, problems []string) Notice {
	if len(problems) == 0 {
		return n
	}
	text := "The link asks for settings the analysis cannot use, so their defaults are used instead: " + strings.Join(problems, "; ") + "."
	if n.Text != "" {
		text = n.Text + " " + text
	}
	n.Text, n.Warn = text, true
	return n
}
