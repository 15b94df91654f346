package ui

import (
	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/examples"
)

// Gallery lists the example scenarios; choosing one loads it into the
// editor.
type Gallery struct {
	app.Compo
	Host Host
	// Current is the ID of the example loaded last ("" after edits).
	Current string
}

// Render draws one button per example with its one-line description.
func (g *Gallery) Render() app.UI {
	items := make([]app.UI, len(examples.All))
	for i, ex := range examples.All {
		id := ex.ID
		cls := "ex"
		if id == g.Current {
			cls += " current"
		}
		items[i] = app.Li().Body(
			app.Button().Type("button").Class(cls).Aria("current", boolAttr(id == g.Current)).
				OnClick(func(ctx app.Context, e app.Event) { g.Host.LoadExample(ctx, id) }).
				Body(
					app.Span().Class("ex-title").Text(ex.Title),
					app.Span().Class("ex-shows").Text(ex.Shows),
				),
		)
	}
	return app.Ul().Class("gallery").Body(items...)
}

func boolAttr(b bool) string {
	if b {
		return "true"
	}
	return "false"
}
