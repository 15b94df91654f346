//go:build js && wasm

// Command bellcheck's browser entry: it runs the calculator page and sets
// the JavaScript API on window (window.bellcheck, see app/ui's APIName).
package main

import (
	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/ui"
)

func main() {
	registerRoutes()
	// The API does not depend on the page: scripts may call it as soon as
	// the bellcheck-ready event fires. A browser without it still gets the
	// page.
	_ = ui.InstallAPI()
	app.RunWhenOnBrowser()
}
