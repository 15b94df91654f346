//go:build js && wasm

// Command bellcheck's browser entry: in a page it runs the calculator page
// and sets the JavaScript API on window (window.bellcheck, see app/ui's
// APIName); in a worker the page started it serves the page's analyses
// (app/ui's ServeAnalyses).
package main

import (
	"runtime/debug"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/jsdom"
	"bellcheck/app/ui"
	"bellcheck/engine"
)

func main() {
	// The live heap is small (2 to 4 MB) while a 2-D analysis allocates 5
	// to 7 MB: at the default target the page collected three times per
	// analysis, each a stretch of its only thread (engine.GCPercent).
	debug.SetGCPercent(engine.GCPercent)
	if jsdom.InWorker() {
		// The same program, started by the page as its analysis worker
		// (web/bellcheck-worker.js): it serves the page's analyses and
		// draws nothing. Without a way to hear the page it ends, and the
		// page analyses on its own thread.
		if err := ui.ServeAnalyses(); err != nil {
			return
		}
		select {}
	}
	_ = jsdom.Mark(ui.MarkMain) // a cold load's split: the program runs
	registerRoutes()
	// The API does not depend on the page: scripts may call it as soon as
	// the bellcheck-ready event fires. A browser without it still gets the
	// page.
	_ = ui.InstallAPI()
	app.RunWhenOnBrowser()
}
