//go:build !(js && wasm)

package main

import (
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"sort"
	"strings"
	"testing"

	"bellcheck/app/share"
	"bellcheck/engine/model"
)

// webCopy returns a copy of ../web with a stand-in app.wasm (the static
// site's generator only copies it), so the test needs no wasm build.
func webCopy(t *testing.T) string {
	t.Helper()
	dir := t.TempDir()
	entries, err := os.ReadDir(filepath.Join("..", "web"))
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range entries {
		if e.IsDir() || e.Name() == "app.wasm" {
			continue
		}
		b, err := os.ReadFile(filepath.Join("..", "web", e.Name()))
		if err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(dir, e.Name()), b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	// The WebAssembly magic number and version: enough for a file copy.
	if err := os.WriteFile(filepath.Join(dir, "app.wasm"), []byte("\x00asm\x01\x00\x00\x00"), 0o644); err != nil {
		t.Fatal(err)
	}
	return dir
}

func readFile(t *testing.T, path string) string {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

// inlineScript matches a script element without a src attribute; handler an
// inline event-handler attribute; attrURL the URLs of href and src.
var (
	scriptTag = regexp.MustCompile(`(?is)<script\b[^>]*>`)
	handler   = regexp.MustCompile(`(?i)<[^>]*\son[a-z]+\s*=`)
	attrURL   = regexp.MustCompile(`\s(?:href|src)="([^"]*)"`)
	cspTag    = regexp.MustCompile(`<meta http-equiv="Content-Security-Policy" content="([^"]*)">`)
)

// checkNoInlineCode fails when an HTML document has inline scripts or
// event-handler attributes, which the policy would block (and which would
// need a hash).
func checkNoInlineCode(t *testing.T, name, doc string) {
	t.Helper()
	for _, tag := range scriptTag.FindAllString(doc, -1) {
		if !strings.Contains(tag, " src=") {
			t.Errorf("%s: inline script %s", name, tag)
		}
	}
	if m := handler.FindString(doc); m != "" {
		t.Errorf("%s: inline event handler in %q", name, m)
	}
}

// directives parses a policy into its directives.
func directives(policy string) map[string][]string {
	out := map[string][]string{}
	for _, d := range strings.Split(policy, ";") {
		f := strings.Fields(d)
		if len(f) > 0 {
			out[f[0]] = f[1:]
		}
	}
	return out
}

func TestStaticSiteFilesAndPolicy(t *testing.T) {
	dir := t.TempDir()
	if err := writeStatic(dir, webCopy(t), ""); err != nil {
		t.Fatal(err)
	}
	var files []string
	filepath.WalkDir(dir, func(p string, d os.DirEntry, err error) error {
		if err == nil && !d.IsDir() {
			rel, _ := filepath.Rel(dir, p)
			files = append(files, filepath.ToSlash(rel))
		}
		return nil
	})
	sort.Strings(files)
	for _, want := range []string{"index.html", "app.js", "app-worker.js", "wasm_exec.js", "app.css", "manifest.webmanifest",
		"web/app.wasm", "web/bellcheck.css", "web/icon.svg", "web/embed-example.html", "web/embed-example.js", "web/embed-example.css",
		"web/bellcheck-worker.js"} {
		if i := sort.SearchStrings(files, want); i == len(files) || files[i] != want {
			t.Errorf("the static site lacks %s (it has %v)", want, files)
		}
	}
	index := readFile(t, filepath.Join(dir, "index.html"))
	checkNoInlineCode(t, "index.html", index)
	tags := cspTag.FindAllStringSubmatch(index, -1)
	if len(tags) != 1 {
		t.Fatalf("index.html has %d policy meta elements, want 1", len(tags))
	}
	if head := strings.Index(index, "</head>"); strings.Index(index, tags[0][0]) > head {
		t.Error("the policy is not in the head")
	}
	csp := directives(tags[0][1])
	want := map[string]string{
		"default-src": "'none'", "script-src": "'self' 'wasm-unsafe-eval'", "style-src-elem": "'self'",
		"connect-src": "'self'", "worker-src": "'self'", "object-src": "'none'", "base-uri": "'none'",
	}
	for d, v := range want {
		if got := strings.Join(csp[d], " "); got != v {
			t.Errorf("%s is %q, want %q", d, got, v)
		}
	}
	for d, srcs := range csp {
		for _, s := range srcs {
			if s == "'unsafe-eval'" {
				t.Errorf("%s allows eval", d)
			}
		}
	}
	if _, ok := csp["frame-ancestors"]; ok {
		t.Error("frame-ancestors in a meta policy (browsers ignore it and warn)")
	}
	for _, m := range attrURL.FindAllStringSubmatch(index, -1) {
		if strings.HasPrefix(m[1], "http:") || strings.HasPrefix(m[1], "https:") {
			t.Errorf("index.html loads %s from elsewhere", m[1])
		}
	}
	checkScriptSyntax(t, filepath.Join(dir, "app-worker.js"), filepath.Join(dir, "app.js"), filepath.Join(dir, "web", "embed-example.js"),
		filepath.Join(dir, "web", "bellcheck-worker.js"))
}

func TestStaticSiteUnderAPrefix(t *testing.T) {
	dir := t.TempDir()
	if err := writeStatic(dir, webCopy(t), "/tools/bellcheck/"); err != nil {
		t.Fatal(err)
	}
	index := readFile(t, filepath.Join(dir, "index.html"))
	urls := attrURL.FindAllStringSubmatch(index, -1)
	if len(urls) < 5 {
		t.Fatalf("only %d resource URLs in index.html", len(urls))
	}
	for _, m := range urls {
		if !strings.HasPrefix(m[1], "/tools/bellcheck/") {
			t.Errorf("index.html refers to %s outside the prefix", m[1])
		}
	}
	app := readFile(t, filepath.Join(dir, "app.js"))
	for _, want := range []string{`"/tools/bellcheck/app-worker.js"`, `"/tools/bellcheck/web/app.wasm"`, `"GOAPP_ROOT_PREFIX":"/tools/bellcheck"`} {
		if !strings.Contains(app, want) {
			t.Errorf("app.js lacks %s", want)
		}
	}
	worker := readFile(t, filepath.Join(dir, "app-worker.js"))
	for _, want := range []string{`const rootURL = "/tools/bellcheck";`, `const pageURL = "/tools/bellcheck/index.html";`, `"/tools/bellcheck/web/app.wasm"`, `"/tools/bellcheck/index.html"`,
		`"/tools/bellcheck/web/bellcheck-worker.js"`} { // the analysis worker's script is cached too
		if !strings.Contains(worker, want) {
			t.Errorf("the service worker lacks %s", want)
		}
	}
	checkScriptSyntax(t, filepath.Join(dir, "app-worker.js"))
}

// checkScriptSyntax has node parse the scripts (node --check) when node is
// installed (make test-wasm installs it).
func checkScriptSyntax(t *testing.T, files ...string) {
	t.Helper()
	node, err := exec.LookPath("node")
	if err != nil {
		t.Log("node is not installed: the scripts' syntax is not checked")
		return
	}
	for _, f := range files {
		if out, err := exec.Command(node, "--check", f).CombinedOutput(); err != nil {
			t.Errorf("%s does not parse: %v\n%s", filepath.Base(f), err, out)
		}
	}
}

func TestEmbedExampleHostPage(t *testing.T) {
	doc := readFile(t, filepath.Join("..", "web", "embed-example.html"))
	checkNoInlineCode(t, "embed-example.html", doc)
	if m := cspTag.FindStringSubmatch(doc); m == nil || strings.Contains(m[1], "unsafe") {
		t.Error("the example host page has no strict policy of its own")
	}
	frames := regexp.MustCompile(`(?s)<iframe\b[^>]*\bsrc="([^"]*)"`).FindAllStringSubmatch(doc, -1)
	if len(frames) != 2 {
		t.Fatalf("%d frames, want 2", len(frames))
	}
	seen := map[string]bool{}
	for _, f := range frames {
		src := f[1]
		i := strings.IndexByte(src, '#')
		if i < 0 {
			t.Fatalf("frame %q has no state", src)
		}
		st, err := share.Decode(src[i+1:])
		if err != nil {
			t.Fatalf("frame state: %v", err)
		}
		if !st.View.Embed {
			t.Error("a frame's link does not choose the embed view")
		}
		if _, err := model.Parse(st.Model); err != nil {
			t.Errorf("a frame's model does not parse: %v", err)
		}
		seen[st.Model] = true
	}
	if len(seen) != 2 {
		t.Error("the two frames show the same model")
	}
	js := readFile(t, filepath.Join("..", "web", "embed-example.js"))
	for _, want := range []string{"event.source", "event.origin", `data.bellcheck === "height"`, "Number.isInteger(data.value)"} {
		if !strings.Contains(js, want) {
			t.Errorf("embed-example.js does not check %s", want)
		}
	}
	if regexp.MustCompile(`innerHTML|outerHTML|insertAdjacentHTML|eval\(|new Function`).MatchString(js) {
		t.Error("embed-example.js builds HTML or code from text")
	}
}
