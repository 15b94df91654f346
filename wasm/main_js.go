//go:build js && wasm

// Command bellcheck's browser entry: it runs the calculator page.
package main

import "github.com/maxence-charriere/go-app/v10/pkg/app"

func main() {
	registerRoutes()
	app.RunWhenOnBrowser()
}
