package ui

import (
	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/plot"
	"bellcheck/engine"
)

// Host is what the page's parts report to: the page implements it. Parts
// hold it as a field; since it is the same pointer on every render, go-app
// does not re-render a part just because its parent did.
type Host interface {
	// Input reports the editor's text after a keystroke.
	Input(ctx app.Context, text string)
	// SetParam changes a parameter's options.
	SetParam(ctx app.Context, name string, o engine.ParamOptions)
	// LoadExample replaces the model by a gallery example.
	LoadExample(ctx app.Context, id string)
	// SetView changes the plots' view: the log scale and hidden methods.
	SetView(ctx app.Context, log bool, hidden [plot.NumMethods]bool)
	// RestoreHistory opens a model kept in the history, by its key.
	RestoreHistory(ctx app.Context, key string)
	// ForgetHistory deletes a model kept in the history, by its key.
	ForgetHistory(ctx app.Context, key string)
	// FitUnconstrained fits each named parameter on the log or logit scale
	// of its support (transform.Unconstrained) and analyses once.
	FitUnconstrained(ctx app.Context, names []string)
}
