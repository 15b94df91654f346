//go:build browser && !(js && wasm)

package main

// The browser build matches go-app's pattern routes with the browser's
// RegExp (wasm/_goapp/route.go) instead of Go's regexp: the page must
// still open under any path, as `bellcheck serve` and the offline service
// worker deliver it.

import (
	"net/http/httptest"
	"os"
	"path/filepath"
	"testing"
)

func TestBrowserRoutes(t *testing.T) {
	exe := chromiumPath(t)
	if _, err := os.Stat(filepath.Join("..", "web", "app.wasm")); err != nil {
		t.Fatalf("web/app.wasm is missing: build it with `make wasm` (make test-browser does)")
	}
	registerRoutes()
	srv := httptest.NewServer(newHandler(filepath.Join("..", "web"), ""))
	t.Cleanup(srv.Close)
	b := startBrowser(t, exe, wideW, wideH)
	// "/" is an exact route; these paths are matched only by the pattern
	// route "^.*$".
	for _, path := range []string{"/index.html", "/elsewhere"} {
		t.Run(path, func(t *testing.T) {
			tb := b.newTab(t, true)
			defer tb.close()
			st := tb.open(t, srv.URL+path)
			if st.Done < 1 {
				t.Fatalf("no analysis at %s: status %q, console errors %v", path, st.Status, tb.consoleErrors())
			}
		})
	}
}
