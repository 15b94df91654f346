//go:build !(js && wasm)

package main

import (
	"bytes"
	"compress/gzip"
	"io"
	"net/http"
	"net/http/httptest"
	"path/filepath"
	"strings"
	"testing"
)

// goAppLoader returns app.js as go-app's handler generates it.
func goAppLoader(t *testing.T, webDir string) []byte {
	t.Helper()
	rec := httptest.NewRecorder()
	newHandler(webDir, "").ServeHTTP(rec, httptest.NewRequest(http.MethodGet, "/app.js", nil))
	if rec.Code != http.StatusOK {
		t.Fatalf("go-app's app.js: status %d", rec.Code)
	}
	return rec.Body.Bytes()
}

// TestPatchLoaderSwapsOnlyTheFetch: the patched loader is go-app's with
// fetchWithProgress, and nothing else, replaced; the function's call is
// still there, and the response built in script is gone.
func TestPatchLoaderSwapsOnlyTheFetch(t *testing.T) {
	orig := string(goAppLoader(t, webCopy(t)))
	b, err := patchLoader([]byte(orig))
	if err != nil {
		t.Fatal(err)
	}
	got := string(b)
	start := strings.Index(orig, loaderFetchStart)
	end := start + strings.Index(orig[start:], loaderFetchEnd) + len(loaderFetchEnd)
	if want := orig[:start] + loaderFetch + orig[end:]; got != want {
		t.Fatal("the patched loader differs from go-app's outside fetchWithProgress")
	}
	if strings.Contains(orig[start:end], "new Response(") == false {
		t.Fatal("go-app's fetchWithProgress no longer builds a Response: is the patch still needed?")
	}
	if strings.Contains(got, "new Response(") || strings.Contains(got, "new ReadableStream(") {
		t.Error("the patched loader still builds a response in script")
	}
	if n, m := strings.Count(orig, "fetchWithProgress("), strings.Count(got, "fetchWithProgress("); n != m {
		t.Errorf("fetchWithProgress appears %d times in go-app's loader, %d in the patched one", n, m)
	}
	if _, err := patchLoader([]byte("// another loader\n")); err == nil {
		t.Error("a loader without fetchWithProgress was patched without an error")
	}
}

// TestLoaderCountsTheUncompressedSize: the progress is counted against the
// size of app.wasm itself, which a compressing server's Content-Length is
// not.
func TestLoaderCountsTheUncompressedSize(t *testing.T) {
	js := string(goAppLoader(t, webCopy(t)))
	if !strings.Contains(js, `const goappWasmContentLength = "8";`) { // webCopy's stand-in has 8 bytes
		t.Errorf("app.js does not give app.wasm's size: %q", js[:min(len(js), 800)])
	}
}

// TestServedAndWrittenLoadersArePatched: `bellcheck serve` (siteHandler)
// and `bellcheck static` (writeStatic, with its gzip copy) deliver the
// patched loader.
func TestServedAndWrittenLoadersArePatched(t *testing.T) {
	web := webCopy(t)
	srv := httptest.NewServer(siteHandler(web, ""))
	defer srv.Close()
	for _, path := range []string{"/app.js", "/goapp.js"} {
		res, err := http.Get(srv.URL + path)
		if err != nil {
			t.Fatal(err)
		}
		body, _ := io.ReadAll(res.Body)
		res.Body.Close()
		if res.StatusCode != http.StatusOK || !strings.Contains(string(body), loaderFetch) {
			t.Errorf("served %s: status %d, patched %v", path, res.StatusCode, strings.Contains(string(body), loaderFetch))
		}
		if ct := res.Header.Get("Content-Type"); !strings.Contains(ct, "javascript") {
			t.Errorf("served %s as %q", path, ct)
		}
	}
	dir := t.TempDir()
	if err := writeStatic(dir, web, ""); err != nil {
		t.Fatal(err)
	}
	js := readFile(t, filepath.Join(dir, "app.js"))
	if !strings.Contains(js, loaderFetch) {
		t.Error("the static site's app.js is go-app's, not patched")
	}
	zr, err := gzip.NewReader(bytes.NewReader([]byte(readFile(t, filepath.Join(dir, "app.js.gz")))))
	if err != nil {
		t.Fatal(err)
	}
	unzipped, err := io.ReadAll(zr)
	if err != nil {
		t.Fatal(err)
	}
	if string(unzipped) != js {
		t.Error("the static site's app.js.gz is not its app.js")
	}
}
