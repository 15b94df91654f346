//go:build !(js && wasm)

package jsdom

// WorkerScript is the analysis worker's bootstrap script, in the site's web
// folder beside app.wasm.
const WorkerScript = "web/bellcheck-worker.js"

// Worker is a dedicated worker; natively there is none.
type Worker struct{}

// InWorker reports whether the program runs in a worker: false natively.
func InWorker() bool { return false }

// WorkerURL returns the worker script's address; natively it returns
// ErrNoBrowser.
func WorkerURL() (string, error) { return "", ErrNoBrowser }

// StartWorker starts a worker; natively it returns ErrNoBrowser.
func StartWorker(url string, onBytes func([]byte), onReady func(), onFail func(reason string)) (*Worker, error) {
	return nil, ErrNoBrowser
}

// Post sends bytes to the worker; natively it returns ErrNoBrowser.
func (wk *Worker) Post(b []byte) error { return ErrNoBrowser }

// Terminate ends the worker; natively it does nothing.
func (wk *Worker) Terminate() {}

// ServeWorker answers the page from a worker; natively it returns
// ErrNoBrowser.
func ServeWorker(onBytes func([]byte)) error { return ErrNoBrowser }

// PostToPage sends bytes to the page; natively it returns ErrNoBrowser.
func PostToPage(b []byte) error { return ErrNoBrowser }
