//go:build js && wasm

// Command bellcheck's browser entry: it runs the calculator page and sets
// the JavaScript API on window (window.bellcheck, see app/ui's APIName).
package main

import (
	"runtime/debug"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/ui"
)

// gcPercent is the page's garbage collection target (GOGC): the heap may
// grow to five times what is live before a collection. The page's live
// heap is small (2 to 4 MB) while a 2-D analysis allocates 5 to 7 MB, so
// the default (100) collected three times per analysis, each a stretch of
// the page's only thread; at 400 the heap stays under about 20 MB.
const gcPercent = 400

func main() {
	debug.SetGCPercent(gcPercent)
	registerRoutes()
	// The API does not depend on the page: scripts may call it as soon as
	// the bellcheck-ready event fires. A browser without it still gets the
	// page.
	_ = ui.InstallAPI()
	app.RunWhenOnBrowser()
}
