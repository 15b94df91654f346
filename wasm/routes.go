package main

import (
	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/ui"
)

// registerRoutes binds the page's paths to their components; the browser's
// main and the native server both call it, so they agree on the pages.
func registerRoutes() {
	app.Route("/", func() app.Composer { return &ui.Page{} })
}
