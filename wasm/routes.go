package main

import (
	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/ui"
)

// registerRoutes binds the page's paths to their components; the browser's
// main and the native server both call it, so they agree on the pages.
// Every path shows the calculator: under a path prefix go-app matches the
// path left after the prefix ("/" for /tools/bellcheck/, "/index.html" when
// a server names the file, "" for /tools/bellcheck), and the calculator
// has one page.
func registerRoutes() {
	app.Route("/", func() app.Composer { return &ui.Page{} })
	app.RouteWithRegexp("^.*$", func() app.Composer { return &ui.Page{} })
}
