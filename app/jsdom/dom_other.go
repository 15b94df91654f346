//go:build !(js && wasm)

package jsdom

// DrawRGBA fills a canvas with pixels; natively it returns ErrNoBrowser.
func DrawRGBA(canvasID string, width, height int, pixels []byte) error { return ErrNoBrowser }

// SetValue sets an element's value; natively it returns ErrNoBrowser.
func SetValue(id, value string) error { return ErrNoBrowser }

// SetText sets an element's text; natively it returns ErrNoBrowser.
func SetText(id, text string) error { return ErrNoBrowser }

// Value reads an element's value; natively it returns ErrNoBrowser.
func Value(id string) (string, error) { return "", ErrNoBrowser }

// BoundingRect returns an element's box; natively it returns ErrNoBrowser.
func BoundingRect(id string) (Rect, error) { return Rect{}, ErrNoBrowser }

// Focus focuses an element; natively it returns ErrNoBrowser.
func Focus(id string) error { return ErrNoBrowser }

// Available reports whether the browser's API is reachable: false natively.
func Available() bool { return false }

// Checked reads a checkbox; natively it returns ErrNoBrowser.
func Checked(id string) (bool, error) { return false, ErrNoBrowser }

// SetValidity sets an input's validity message; natively it returns
// ErrNoBrowser.
func SetValidity(id, message string) error { return ErrNoBrowser }

// Fragment returns the URL fragment; natively it returns ErrNoBrowser.
func Fragment() (string, error) { return "", ErrNoBrowser }

// ReplaceFragment sets the URL fragment; natively it returns ErrNoBrowser.
func ReplaceFragment(fragment string) error { return ErrNoBrowser }

// LoadItem reads local storage; natively it returns ErrNoBrowser.
func LoadItem(key string) (value string, ok bool, err error) { return "", false, ErrNoBrowser }

// SaveItem writes local storage; natively it returns ErrNoBrowser.
func SaveItem(key, value string) error { return ErrNoBrowser }

// StorageKeys lists local storage's keys; natively it returns ErrNoBrowser.
func StorageKeys() ([]string, error) { return nil, ErrNoBrowser }

// LoadSessionItem reads session storage; natively it returns ErrNoBrowser.
func LoadSessionItem(key string) (value string, ok bool, err error) { return "", false, ErrNoBrowser }

// SaveSessionItem writes session storage; natively it returns ErrNoBrowser.
func SaveSessionItem(key, value string) error { return ErrNoBrowser }

// RemoveItem deletes a local-storage key; natively it returns ErrNoBrowser.
func RemoveItem(key string) error { return ErrNoBrowser }

// OnStorage watches other tabs' storage changes; natively it returns
// ErrNoBrowser.
func OnStorage(f func()) error { return ErrNoBrowser }

// OnLeave watches for the page going away or hidden; natively it returns
// ErrNoBrowser.
func OnLeave(f func()) error { return ErrNoBrowser }

// OnHashChange watches the URL fragment; natively it returns ErrNoBrowser.
func OnHashChange(f func()) error { return ErrNoBrowser }

// PageURL returns the page's address; natively it returns ErrNoBrowser.
func PageURL() (string, error) { return "", ErrNoBrowser }

// CopyText writes to the clipboard; natively done receives ErrNoBrowser.
func CopyText(text string, done func(error)) { done(ErrNoBrowser) }

// SelectText selects a field's text; natively it returns ErrNoBrowser.
func SelectText(id string) (copied bool, err error) { return false, ErrNoBrowser }

// Download saves a file; natively it returns ErrNoBrowser.
func Download(filename, mime string, data []byte) error { return ErrNoBrowser }

// CanvasDataURL reads a canvas; natively it returns ErrNoBrowser.
func CanvasDataURL(canvasID string) (string, error) { return "", ErrNoBrowser }

// DownloadPNG saves an SVG as PNG; natively done receives ErrNoBrowser.
func DownloadPNG(filename, svg string, width, height int, done func(error)) { done(ErrNoBrowser) }

// Framed reports whether the page runs in a frame: false natively.
func Framed() bool { return false }

// ReportHeight sends the page's height to its parent; natively it does
// nothing.
func ReportHeight(id string) error { return nil }

// AsyncFunc is a Go function behind a Promise-returning JavaScript
// function; see the browser build's documentation.
type AsyncFunc func(args []string) (string, error)

// ExposeAPI sets a JavaScript API on window; natively it returns
// ErrNoBrowser.
func ExposeAPI(name string, props map[string]string, funcs map[string]AsyncFunc) error {
	return ErrNoBrowser
}

// DispatchEvent fires an event on window; natively it returns ErrNoBrowser.
func DispatchEvent(eventType string) error { return ErrNoBrowser }

// ReadInputFile reads a chosen file; natively it reports ErrNoBrowser.
func ReadInputFile(id string, maxBytes int, done func(name, text string, err error)) {
	done("", "", ErrNoBrowser)
}

// OnDropFile makes an element a file drop target; natively it returns
// ErrNoBrowser.
func OnDropFile(id string, maxBytes int, done func(name, text string, err error)) error {
	return ErrNoBrowser
}
