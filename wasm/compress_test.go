//go:build !(js && wasm)

package main

import (
	"bytes"
	"compress/gzip"
	"io"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"testing"
)

// Accept-Encoding as RFC 9110, section 12.5.3 defines it: a coding with
// q=0 is refused.
func TestAcceptsGzip(t *testing.T) {
	for _, c := range []struct {
		header string
		want   bool
	}{
		{"gzip, deflate, br", true},
		{"br;q=1.0, gzip;q=0.8", true},
		{"gzip;q=0", false},
		{"gzip; q=0.0", false},
		{"*", true},
		{"identity", false},
		{"", false},
		{"GZIP", true},
	} {
		if got := acceptsGzip(c.header); got != c.want {
			t.Errorf("acceptsGzip(%q) = %v, want %v", c.header, got, c.want)
		}
	}
}

// A precompressed copy is served with the original's type to a client that
// accepts gzip and decompresses to the original; other clients get the
// original bytes.
func TestGzipFiles(t *testing.T) {
	dir := t.TempDir()
	body := bytes.Repeat([]byte("function f(x) { return x * x; }\n"), 200)
	if err := os.WriteFile(filepath.Join(dir, "app.js"), body, 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, "small.css"), []byte("a{}"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := writeCompressed(dir); err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(filepath.Join(dir, "small.css.gz")); err == nil {
		t.Error("a file under minCompressed bytes was compressed")
	}
	srv := httptest.NewServer(gzipFiles(dir, http.FileServer(http.Dir(dir))))
	defer srv.Close()
	get := func(enc string) *http.Response {
		req, _ := http.NewRequest(http.MethodGet, srv.URL+"/app.js", nil)
		req.Header.Set("Accept-Encoding", enc)
		resp, err := http.DefaultTransport.RoundTrip(req)
		if err != nil {
			t.Fatal(err)
		}
		return resp
	}
	resp := get("gzip")
	defer resp.Body.Close()
	if resp.Header.Get("Content-Encoding") != "gzip" || resp.Header.Get("Content-Type") != compressible[".js"] {
		t.Fatalf("headers %v", resp.Header)
	}
	zr, err := gzip.NewReader(resp.Body)
	if err != nil {
		t.Fatal(err)
	}
	got, err := io.ReadAll(zr)
	if err != nil || !bytes.Equal(got, body) {
		t.Fatalf("decompressed body differs (%d bytes, %v)", len(got), err)
	}
	plain := get("identity")
	defer plain.Body.Close()
	raw, _ := io.ReadAll(plain.Body)
	if plain.Header.Get("Content-Encoding") != "" || !bytes.Equal(raw, body) {
		t.Fatalf("identity request got encoding %q, %d bytes", plain.Header.Get("Content-Encoding"), len(raw))
	}
}
