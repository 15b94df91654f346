//go:build !(js && wasm)

package main

import (
	"errors"
	"net/http"
	"net/http/httptest"
	"strconv"
	"strings"
	"sync"
)

// go-app's loader (app.js) fetches app.wasm through fetchWithProgress, which
// copies the download into a Response built in script to count its bytes
// for the loading label. The browser keeps the compiled code of a module
// with the cached file only when the compiler is given the fetched response
// itself, so go-app's copy made every visit compile the whole program again
// (on a return visit as on the first). patchLoader swaps in a version that
// hands the compiler the response and counts the bytes of a clone.

// loaderFetchStart and loaderFetchEnd bound go-app's fetchWithProgress in
// app.js (go-app v10.1.11).
const (
	loaderFetchStart = "async function fetchWithProgress("
	loaderFetchEnd   = "\n  return res;\n}\n"
)

// loaderFetch replaces it. goappWasmContentLength is the uncompressed size
// of app.wasm (newHandler sets it), which the clone's bytes are counted
// against even when the server sends the file compressed.
const loaderFetch = `// bellcheck: the compiler gets the fetched response itself, so that the
// browser can keep the compiled program with the cached app.wasm and use it
// again on the next visit; the loading label counts the bytes of a clone.
async function fetchWithProgress(url, progress) {
  const response = await fetch(url);
  const total = parseInt(goappWasmContentLength, 10);
  if (response.ok && response.body && total > 0) {
    const reader = response.clone().body.getReader();
    let loaded = 0;
    (async () => {
      for (;;) {
        const { done, value } = await reader.read();
        if (done) {
          progress(100);
          return;
        }
        loaded += value.byteLength;
        progress(Math.min(100, Math.round((loaded * 100) / total)));
      }
    })().catch(() => {});
  }
  return response;
}
`

// patchLoader returns go-app's app.js with fetchWithProgress replaced by
// loaderFetch, or an error when the function is not where go-app v10.1.11
// has it (another go-app version).
func patchLoader(js []byte) ([]byte, error) {
	s := string(js)
	start := strings.Index(s, loaderFetchStart)
	if start < 0 {
		return nil, errors.New("app.js: go-app's fetchWithProgress is missing (another go-app version?)")
	}
	n := strings.Index(s[start:], loaderFetchEnd)
	if n < 0 {
		return nil, errors.New("app.js: the end of go-app's fetchWithProgress is missing (another go-app version?)")
	}
	end := start + n + len(loaderFetchEnd)
	return []byte(s[:start] + loaderFetch + s[end:]), nil
}

// withPatchedLoader serves h with its app.js (and the goapp.js alias) passed
// through patchLoader once; a failed patch is a server error on those paths.
func withPatchedLoader(h http.Handler) http.Handler {
	var once sync.Once
	var body []byte
	var header http.Header
	var err error
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		if r.URL.Path != "/app.js" && r.URL.Path != "/goapp.js" {
			h.ServeHTTP(w, r)
			return
		}
		once.Do(func() {
			rec := httptest.NewRecorder()
			h.ServeHTTP(rec, httptest.NewRequest(http.MethodGet, "/app.js", nil))
			header = rec.Header().Clone()
			body, err = patchLoader(rec.Body.Bytes())
		})
		if err != nil {
			http.Error(w, err.Error(), http.StatusInternalServerError)
			return
		}
		for k, v := range header {
			w.Header()[k] = v
		}
		w.Header().Set("Content-Length", strconv.Itoa(len(body)))
		w.WriteHeader(http.StatusOK)
		if r.Method != http.MethodHead {
			w.Write(body)
		}
	})
}
