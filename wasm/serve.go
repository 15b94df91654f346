//go:build !(js && wasm)

package main

import (
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"flag"
	"fmt"
	"io"
	"io/fs"
	"net"
	"net/http"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/jsdom"
)

// newHandler returns the go-app handler for the calculator page. webDir is
// the folder holding app.wasm and the static assets; prefix is the path the
// site is hosted under ("" for the root).
func newHandler(webDir, prefix string) *app.Handler {
	h := &app.Handler{
		Name:         "bellcheck",
		ShortName:    "bellcheck",
		Title:        "bellcheck: how good is a Gaussian approximation of your posterior?",
		Description:  "Exact grid posterior of a 1-4 parameter log-density beside its Laplace, reverse-KL and forward-KL Gaussian fits.",
		Lang:         "en",
		LoadingLabel: "bellcheck is loading the calculator ({progress}%)",
		Icon:         app.Icon{Default: "/web/icon.svg", SVG: "/web/icon.svg"},
		Styles:       []string{"/web/bellcheck.css"},
		ThemeColor:   "#1d3b53",
		Version:      contentVersion(filepath.Join(webDir, "app.wasm")),
	}
	// The loader's progress counts the uncompressed bytes (patchLoader).
	if st, err := os.Stat(filepath.Join(webDir, "app.wasm")); err == nil {
		h.WasmContentLength = strconv.FormatInt(st.Size(), 10)
	}
	if prefix != "" && prefix != "/" {
		h.Resources = app.PrefixedLocation("/" + strings.Trim(prefix, "/"))
	} else {
		h.Resources = app.LocalDir(filepath.Dir(filepath.Clean(webDir)))
	}
	// The content security policy (see contentSecurityPolicy).
	h.RawHeaders = []string{cspMeta}
	// Offline under any path: the worker also caches index.html (which
	// every static server serves under the prefix) and answers a page
	// navigation it cannot fetch with it. The analysis worker's script is
	// not in go-app's list of resources: it is cached beside them.
	h.CacheableResources = []string{"/index.html", "/" + jsdom.WorkerScript}
	h.ServiceWorkerTemplate = serviceWorker(h.Resources.Resolve("/index.html"), h.Resources.Resolve("/"))
	return h
}

// siteHandler serves the calculator as newHandler does, with the loader
// patched (patchLoader) as writeStatic writes it.
func siteHandler(webDir, prefix string) http.Handler {
	return withPatchedLoader(newHandler(webDir, prefix))
}

// contentVersion names a build by the hash of its wasm file, so that the
// service worker updates exactly when the program changes.
func contentVersion(wasmPath string) string {
	f, err := os.Open(wasmPath)
	if err != nil {
		return ""
	}
	defer f.Close()
	sum := sha256.New()
	if _, err := io.Copy(sum, f); err != nil {
		return ""
	}
	return hex.EncodeToString(sum.Sum(nil))[:16]
}

// runServe serves the calculator on a local address.
func runServe(args []string, stderr io.Writer) int {
	fs := flag.NewFlagSet("serve", flag.ContinueOnError)
	fs.SetOutput(stderr)
	addr := fs.String("addr", "127.0.0.1:8000", "address to listen on")
	webDir := fs.String("web", "web", "folder with app.wasm and the static assets")
	if err := fs.Parse(args); err != nil || fs.NArg() != 0 {
		return exitUsage
	}
	if _, err := os.Stat(filepath.Join(*webDir, "app.wasm")); err != nil {
		fmt.Fprintf(stderr, "bellcheck: %s/app.wasm is missing: build it with `make wasm`\n", *webDir)
		return exitModel
	}
	registerRoutes()
	ln, err := net.Listen("tcp", *addr)
	if err != nil {
		fmt.Fprintf(stderr, "bellcheck: %v\n", err)
		return exitModel
	}
	fmt.Fprintf(stderr, "bellcheck: serving the calculator on http://%s/\n", ln.Addr())
	if err := http.Serve(ln, siteHandler(*webDir, "")); err != nil {
		fmt.Fprintf(stderr, "bellcheck: %v\n", err)
		return exitModel
	}
	return exitOK
}

// runStatic writes the static site: pre-rendered index.html, go-app's
// scripts and service worker, and a copy of the web folder.
func runStatic(args []string, stderr io.Writer) int {
	fs := flag.NewFlagSet("static", flag.ContinueOnError)
	fs.SetOutput(stderr)
	prefix := fs.String("prefix", "", "path the site is hosted under, e.g. /tools/bellcheck/")
	webDir := fs.String("web", "web", "folder with app.wasm and the static assets")
	if err := fs.Parse(args); err != nil || fs.NArg() != 1 {
		fmt.Fprint(stderr, usage)
		return exitUsage
	}
	if err := writeStatic(fs.Arg(0), *webDir, *prefix); err != nil {
		fmt.Fprintf(stderr, "bellcheck: %v\n", err)
		return exitModel
	}
	return exitOK
}

// writeStatic generates the static site into dir, with a gzip-compressed
// copy beside each large script, style, page and the wasm (writeCompressed).
func writeStatic(dir, webDir, prefix string) error {
	if _, err := os.Stat(filepath.Join(webDir, "app.wasm")); err != nil {
		return fmt.Errorf("%s/app.wasm is missing: build it with `make wasm`", webDir)
	}
	registerRoutes()
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	if err := app.GenerateStaticWebsite(dir, newHandler(webDir, prefix)); err != nil {
		return fmt.Errorf("generating the static site: %w", err)
	}
	if err := copyTree(filepath.Join(dir, "web"), webDir); err != nil {
		return err
	}
	loader := filepath.Join(dir, "app.js")
	js, err := os.ReadFile(loader)
	if err != nil {
		return err
	}
	if js, err = patchLoader(js); err != nil {
		return err
	}
	if err := os.WriteFile(loader, js, 0o644); err != nil {
		return err
	}
	return writeCompressed(dir)
}

// copyTree copies the regular files below src into dst.
func copyTree(dst, src string) error {
	return filepath.WalkDir(src, func(path string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		rel, err := filepath.Rel(src, path)
		if err != nil {
			return err
		}
		target := filepath.Join(dst, rel)
		if d.IsDir() {
			return os.MkdirAll(target, 0o755)
		}
		if !d.Type().IsRegular() {
			return errors.New("not a regular file: " + path)
		}
		return copyFile(target, path)
	})
}

// copyFile copies src to dst.
func copyFile(dst, src string) error {
	return copyThrough(dst, src, func(w io.Writer) (io.WriteCloser, error) { return nopCloser{w}, nil })
}

// copyThrough copies src to dst through the writer wrap makes (a
// compressor, say), closing it before dst.
func copyThrough(dst, src string, wrap func(io.Writer) (io.WriteCloser, error)) error {
	in, err := os.Open(src)
	if err != nil {
		return err
	}
	defer in.Close()
	out, err := os.Create(dst)
	if err != nil {
		return err
	}
	w, err := wrap(out)
	if err == nil {
		_, err = io.Copy(w, in)
		if cerr := w.Close(); err == nil {
			err = cerr
		}
	}
	if cerr := out.Close(); err == nil {
		err = cerr
	}
	return err
}

// nopCloser is a writer whose Close does nothing.
type nopCloser struct{ io.Writer }

func (nopCloser) Close() error { return nil }
