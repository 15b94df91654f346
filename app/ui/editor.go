package ui

import (
	"strconv"
	"strings"
	"unicode/utf8"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/jsdom"
	"bellcheck/engine/model"
)

// EditorID is the id of the model's textarea.
const EditorID = "bc-model"

// Editor is the model editor: a monospace text area with line numbers, the
// first error marked at its line and column, and the messages below.
type Editor struct {
	app.Compo
	Host Host
	// Initial is the text the area starts with (the page sets later
	// texts, such as a loaded example, through jsdom).
	Initial string
	// Text is the current text; Checked the text Errors belong to, as the
	// parser gave them (their positions index Checked).
	Text, Checked string
	Errors        model.ErrorList
	// Pending reports that a check is due (the text changed since).
	Pending bool
	// ReadOnly shows the text without letting it be changed (the embed
	// view's read-only mode).
	ReadOnly bool
}

// Render draws the editor.
func (e *Editor) Render() app.UI {
	lines := strings.Count(e.Text, "\n") + 1
	width := 0
	for _, l := range strings.Split(e.Text, "\n") {
		width = max(width, utf8.RuneCountInString(l))
	}
	showMarks := !e.Pending && e.Checked == e.Text && len(e.Errors) > 0
	errLine := map[int]bool{}
	if showMarks {
		for _, er := range e.Errors {
			errLine[er.Pos.Line] = true
		}
	}
	gutter := make([]app.UI, 0, 2*lines)
	for i := 1; i <= lines; i++ {
		cls := "ln"
		if errLine[i] {
			cls = "ln ln-err"
		}
		gutter = append(gutter, app.Span().Class(cls).Text(strconv.Itoa(i)), app.Text("\n"))
	}
	// The underlay is always there, empty without marks: the textarea must
	// keep its place among its siblings, or go-app would replace it with a
	// new one holding the initial text.
	code := []app.UI{e.underlay(showMarks)}
	code = append(code, app.Textarea().
		ID(EditorID).
		Class("code-input").
		Attr("spellcheck", "false").
		Attr("autocapitalize", "off").
		Attr("autocomplete", "off").
		Attr("wrap", "off").
		Aria("label", "Model: log-density of the parameters").
		Aria("describedby", "bc-model-status").
		Aria("invalid", strconv.FormatBool(showMarks)).
		Rows(lines+1).
		Style("width", "max(100%, calc("+strconv.Itoa(width+3)+"ch + 1.2rem))").
		ReadOnly(e.ReadOnly).
		Aria("readonly", strconv.FormatBool(e.ReadOnly)).
		Text(e.Initial).
		OnInput(e.onInput))
	return app.Div().Class("editor").Body(
		app.Div().Class("editor-frame").Body(
			app.Pre().Class("gutter").Aria("hidden", "true").Body(gutter...),
			app.Div().Class("code").Body(code...),
		),
		e.status(showMarks),
	)
}

// underlay is a copy of the text behind the transparent textarea, with the
// first error's character marked, so the mark sits exactly under it.
func (e *Editor) underlay(show bool) app.UI {
	if !show {
		return app.Pre().Class("code-underlay").Aria("hidden", "true")
	}
	off := max(0, min(e.Errors[0].Pos.Offset, len(e.Text)))
	end := off
	if end < len(e.Text) && e.Text[end] != '\n' {
		_, size := utf8.DecodeRuneInString(e.Text[end:])
		end += size
	}
	mark := e.Text[off:end]
	if mark == "" {
		mark = " " // the end of a line: mark the place after it
	}
	return app.Pre().Class("code-underlay").Aria("hidden", "true").Body(
		app.Text(e.Text[:off]),
		app.Mark().Class("err-mark").Text(mark),
		app.Text(e.Text[end:]+"\n"),
	)
}

func (e *Editor) status(showMarks bool) app.UI {
	st := app.Div().ID("bc-model-status").Class("editor-status").Attr("role", "status").Aria("live", "polite")
	switch {
	case len(e.Errors) > 0 && showMarks:
		items := make([]app.UI, 0, len(e.Errors))
		for _, er := range e.Errors {
			li := app.Li().Body(
				app.Span().Class("err-pos").Text("line "+strconv.Itoa(er.Pos.Line)+", column "+strconv.Itoa(er.Pos.Col)+": "),
				app.Span().Text(er.Msg),
				app.If(er.Hint != "", func() app.UI {
					return app.Span().Class("err-hint").Text(" Hint: " + er.Hint)
				}),
			)
			items = append(items, li)
		}
		return st.Class("has-errors").Body(app.Ul().Class("err-list").Body(items...))
	case e.Pending:
		return st.Body(app.Span().Class("muted").Text("checking…"))
	default:
		return st.Body(app.Span().Class("ok-mark").Text("✓ "), app.Span().Class("muted").Text("model checked"))
	}
}

func (e *Editor) onInput(ctx app.Context, ev app.Event) {
	if e.ReadOnly {
		return
	}
	v, err := jsdom.Value(EditorID)
	if err != nil || e.Host == nil {
		return
	}
	e.Host.Input(ctx, v)
}
