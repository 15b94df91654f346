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
	"strings"
	"testing"
	"time"
)

func TestBrowserRoutes(t *testing.T) {
	exe := chromiumPath(t)
	if _, err := os.Stat(filepath.Join("..", "web", "app.wasm")); err != nil {
		t.Fatalf("web/app.wasm is missing: build it with `make wasm` (make test-browser does)")
	}
	registerRoutes()
	srv := httptest.NewServer(siteHandler(filepath.Join("..", "web"), ""))
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
	// The loader (patchLoader) gives the compiler the response it fetched,
	// which the browser can keep compiled code beside (a response built in
	// script has no URL and never does), and counts the download for the
	// loading label up to 100 %.
	t.Run("loader", func(t *testing.T) {
		tb := b.newTab(t, true)
		defer tb.close()
		tb.open(t, srv.URL+"/")
		got := eval[struct {
			URL      string    `json:"url"`
			Bytes    float64   `json:"bytes"`
			Progress []float64 `json:"progress"`
		}](t, tb, 60*time.Second, `(async () => {
  const progress = [];
  const res = await fetchWithProgress("/web/app.wasm", (p) => progress.push(p));
  const bytes = (await res.arrayBuffer()).byteLength;
  for (let i = 0; i < 50 && progress[progress.length - 1] !== 100; i++) await new Promise((r) => setTimeout(r, 20));
  return {url: res.url, bytes, progress};
})()`)
		if !strings.HasSuffix(got.URL, "/web/app.wasm") {
			t.Errorf("the loader's response has URL %q: not the fetched response", got.URL)
		}
		st, err := os.Stat(filepath.Join("..", "web", "app.wasm"))
		if err != nil {
			t.Fatal(err)
		}
		if int64(got.Bytes) != st.Size() {
			t.Errorf("the loader's response has %.0f bytes, app.wasm %d", got.Bytes, st.Size())
		}
		p := got.Progress
		if len(p) < 2 || p[len(p)-1] != 100 {
			t.Fatalf("the loading label's progress: %v, want steps ending at 100", p)
		}
		for i := 1; i < len(p); i++ {
			if p[i] < p[i-1] {
				t.Fatalf("the loading label's progress goes back: %v", p)
			}
		}
	})
}
