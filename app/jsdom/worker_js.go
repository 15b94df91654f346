//go:build js && wasm

package jsdom

import (
	"errors"
	"strings"

	"github.com/hack-pad/safejs"
)

// WorkerScript is the analysis worker's bootstrap script, in the site's web
// folder beside app.wasm (web/bellcheck-worker.js).
const WorkerScript = "web/bellcheck-worker.js"

// The worker's own status messages (strings; everything else is bytes).
const (
	workerReady  = "ready"
	workerExited = "exited"
)

// Worker is a dedicated worker the page started (StartWorker).
type Worker struct {
	w safejs.Value
	// funcs are the handlers to release when the worker ends.
	funcs []safejs.Func
}

// InWorker reports whether the program runs in a dedicated worker (a
// global scope with postMessage and no document) rather than in a page.
func InWorker() bool {
	g := safejs.Global()
	doc, err := g.Get("document")
	if err != nil || !(doc.IsUndefined() || doc.IsNull()) {
		return false
	}
	imp, err := g.Get("importScripts")
	return err == nil && !imp.IsUndefined()
}

// WorkerURL returns the address of the worker's script: WorkerScript
// beside the page's wasm_exec.js (so it follows a path prefix). It fails
// where the page was not loaded by go-app's scripts.
func WorkerURL() (string, error) {
	doc, err := global("document")
	if err != nil {
		return "", err
	}
	scripts, err := doc.Call("getElementsByTagName", "script")
	if err != nil {
		return "", err
	}
	n, err := scripts.Length()
	if err != nil {
		return "", err
	}
	for i := range n {
		s, err := scripts.Index(i)
		if err != nil {
			continue
		}
		src, err := s.Get("src")
		if err != nil || src.IsUndefined() {
			continue
		}
		u, err := src.String()
		if err != nil {
			continue
		}
		if base, ok := strings.CutSuffix(u, "wasm_exec.js"); ok {
			return base + WorkerScript, nil
		}
	}
	return "", errors.New("jsdom: the page has no wasm_exec.js script")
}

// StartWorker starts a dedicated worker from the script at url. Each byte
// message the worker posts goes to onBytes; onReady runs when it says it is
// ready to take messages; onFail runs (at most once) when it cannot load,
// raises an error it does not handle, or its program ends. The callbacks
// run in the browser's event handler: they must not block.
func StartWorker(url string, onBytes func([]byte), onReady func(), onFail func(reason string)) (*Worker, error) {
	ctor, err := global("Worker")
	if err != nil {
		return nil, err
	}
	w, err := ctor.New(url)
	if err != nil {
		return nil, err // a page from file://, or a policy that forbids it
	}
	wk := &Worker{w: w}
	failed := false
	fail := func(reason string) {
		if !failed {
			failed = true
			onFail(reason)
		}
	}
	onMsg, err := safejs.FuncOf(func(this safejs.Value, args []safejs.Value) any {
		if len(args) == 0 {
			return nil
		}
		data, err := args[0].Get("data")
		if err != nil {
			return nil
		}
		if t, ok := typeOf(data); ok && t == safejs.TypeString {
			s, _ := data.String()
			switch {
			case s == workerReady:
				onReady()
			default:
				fail(s)
			}
			return nil
		}
		b, err := bytesOf(data)
		if err != nil {
			fail("a message the page cannot read: " + err.Error())
			return nil
		}
		onBytes(b)
		return nil
	})
	if err != nil {
		return nil, err
	}
	onErr, err := safejs.FuncOf(func(this safejs.Value, args []safejs.Value) any {
		reason := "the worker failed"
		if len(args) > 0 {
			if m, err := args[0].Get("message"); err == nil && !m.IsUndefined() {
				if s, err := m.String(); err == nil && s != "" {
					reason = s
				}
			}
		}
		fail(reason)
		return nil
	})
	if err != nil {
		onMsg.Release()
		return nil, err
	}
	wk.funcs = []safejs.Func{onMsg, onErr}
	if err := w.Set("onmessage", onMsg.Value()); err != nil {
		wk.release()
		return nil, err
	}
	if err := w.Set("onerror", onErr.Value()); err != nil {
		wk.release()
		return nil, err
	}
	if err := w.Set("onmessageerror", onErr.Value()); err != nil {
		wk.release()
		return nil, err
	}
	return wk, nil
}

// Post sends b to the worker (its buffer is handed over, not copied).
func (wk *Worker) Post(b []byte) error { return post(wk.w, b) }

// Terminate ends the worker at once.
func (wk *Worker) Terminate() {
	_, _ = wk.w.Call("terminate")
	wk.release()
}

func (wk *Worker) release() {
	for _, f := range wk.funcs {
		f.Release()
	}
	wk.funcs = nil
}

// ServeWorker makes the worker's program answer the page: each byte message
// the page posts goes to onBytes (in the browser's event handler: it must
// not block), and the page is told the worker is ready.
func ServeWorker(onBytes func([]byte)) error {
	g := safejs.Global()
	fn, err := safejs.FuncOf(func(this safejs.Value, args []safejs.Value) any {
		if len(args) == 0 {
			return nil
		}
		data, err := args[0].Get("data")
		if err != nil {
			return nil
		}
		if b, err := bytesOf(data); err == nil {
			onBytes(b)
		}
		return nil
	})
	if err != nil {
		return err
	}
	if err := g.Set("onmessage", fn.Value()); err != nil {
		fn.Release()
		return err
	}
	_, err = g.Call("postMessage", workerReady)
	return err
}

// PostToPage sends b from the worker to the page (its buffer handed over).
func PostToPage(b []byte) error { return post(safejs.Global(), b) }

// post posts b to target as an ArrayBuffer it transfers.
func post(target safejs.Value, b []byte) error {
	u8, err := global("Uint8Array")
	if err != nil {
		return err
	}
	arr, err := u8.New(len(b))
	if err != nil {
		return err
	}
	if _, err := safejs.CopyBytesToJS(arr, b); err != nil {
		return err
	}
	buf, err := arr.Get("buffer")
	if err != nil {
		return err
	}
	_, err = target.Call("postMessage", buf, []any{buf})
	return err
}

// bytesOf copies an ArrayBuffer (or a typed array) into Go.
func bytesOf(data safejs.Value) ([]byte, error) {
	u8, err := global("Uint8Array")
	if err != nil {
		return nil, err
	}
	arr, err := u8.New(data)
	if err != nil {
		return nil, err
	}
	n, err := arr.Length()
	if err != nil {
		return nil, err
	}
	b := make([]byte, n)
	if _, err := safejs.CopyBytesToGo(b, arr); err != nil {
		return nil, err
	}
	return b, nil
}
