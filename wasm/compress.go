//go:build !(js && wasm)

package main

import (
	"compress/gzip"
	"io"
	"io/fs"
	"net/http"
	"os"
	"path"
	"path/filepath"
	"strconv"
	"strings"
)

// compressible lists the file extensions worth sending gzip-compressed: the
// wasm (11 MB raw, about 3 MB gzipped), the scripts, styles and pages.
var compressible = map[string]string{
	".wasm":        "application/wasm",
	".js":          "text/javascript; charset=utf-8",
	".css":         "text/css; charset=utf-8",
	".html":        "text/html; charset=utf-8",
	".svg":         "image/svg+xml",
	".json":        "application/json",
	".webmanifest": "application/manifest+json",
}

// minCompressed is the smallest file worth a precompressed copy.
const minCompressed = 1024

// writeCompressed writes NAME.gz beside every compressible file of at least
// minCompressed bytes below dir, for static hosts that serve precompressed
// files (and for gzipFiles below).
func writeCompressed(dir string) error {
	return filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		if d.IsDir() || compressible[filepath.Ext(p)] == "" {
			return nil
		}
		info, err := d.Info()
		if err != nil {
			return err
		}
		if info.Size() < minCompressed {
			return nil
		}
		return gzipFile(p+".gz", p)
	})
}

// gzipFile writes src compressed at the best level to dst.
func gzipFile(dst, src string) error {
	in, err := os.Open(src)
	if err != nil {
		return err
	}
	defer in.Close()
	out, err := os.Create(dst)
	if err != nil {
		return err
	}
	zw, err := gzip.NewWriterLevel(out, gzip.BestCompression)
	if err != nil {
		out.Close()
		return err
	}
	if _, err := io.Copy(zw, in); err != nil {
		zw.Close()
		out.Close()
		return err
	}
	if err := zw.Close(); err != nil {
		out.Close()
		return err
	}
	return out.Close()
}

// gzipFiles serves a folder as a compressing static host does: a request
// whose client accepts gzip gets the precompressed NAME.gz where it exists,
// with the original's content type; everything else is served by next.
func gzipFiles(root string, next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		ctype := compressible[path.Ext(r.URL.Path)]
		if ctype == "" || (r.Method != http.MethodGet && r.Method != http.MethodHead) ||
			!acceptsGzip(r.Header.Get("Accept-Encoding")) {
			next.ServeHTTP(w, r)
			return
		}
		name := r.URL.Path
		if strings.HasSuffix(name, "/") {
			next.ServeHTTP(w, r)
			return
		}
		f, err := os.Open(filepath.Join(root, filepath.FromSlash(path.Clean("/"+name))) + ".gz")
		if err != nil {
			next.ServeHTTP(w, r)
			return
		}
		defer f.Close()
		info, err := f.Stat()
		if err != nil || info.IsDir() {
			next.ServeHTTP(w, r)
			return
		}
		h := w.Header()
		h.Set("Content-Type", ctype)
		h.Set("Content-Encoding", "gzip")
		h.Add("Vary", "Accept-Encoding")
		http.ServeContent(w, r, "", info.ModTime(), f)
	})
}

// acceptsGzip reports whether an Accept-Encoding header allows gzip: it
// names gzip (or *) with no quality or a quality above zero (RFC 9110,
// section 12.5.3).
func acceptsGzip(header string) bool {
	for _, part := range strings.Split(header, ",") {
		enc, params, _ := strings.Cut(part, ";")
		enc = strings.TrimSpace(enc)
		if !strings.EqualFold(enc, "gzip") && enc != "*" {
			continue
		}
		q := 1.0
		for _, p := range strings.Split(params, ";") {
			k, v, ok := strings.Cut(strings.TrimSpace(p), "=")
			if ok && strings.EqualFold(strings.TrimSpace(k), "q") {
				f, err := strconv.ParseFloat(strings.TrimSpace(v), 64)
				if err != nil {
					return false
				}
				q = f
			}
		}
		return q > 0
	}
	return false
}
