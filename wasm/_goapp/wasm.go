// This file replaces go-app v10.1.11's pkg/app/wasm.go in bellcheck's browser
// build only (make wasm passes it with go build -overlay; see
// DEVELOPERS.md, "The size of app.wasm"). It is go-app's file (MIT licence,
// LICENSE beside it) with one change: GenerateStaticWebsite, which in the browser
// only panics, is left out: its parameter is the server's Handler, declared
// in http.go, which this build leaves out.

package app

func wasmExecJS() string {
	return ""
}
