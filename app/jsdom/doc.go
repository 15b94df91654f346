// Package jsdom is bellcheck's only door to the browser's JavaScript API:
// canvas pixels, element properties and geometry, the URL fragment and local
// storage. Every call goes through
// github.com/hack-pad/safejs, so a JavaScript exception becomes a Go error,
// never a panic. Built natively, every function returns ErrNoBrowser.
package jsdom

import "errors"

// ErrNoBrowser is returned by every function when the program does not run in
// a browser (a native build, as in tests and on the server).
var ErrNoBrowser = errors.New("jsdom: not running in a browser")

// ErrNoElement is returned when no element has the given id.
var ErrNoElement = errors.New("jsdom: no element with that id")

// ErrNoStorage is returned when the browser offers no local storage.
var ErrNoStorage = errors.New("jsdom: the browser offers no local storage")

// Rect is an element's box in CSS pixels relative to the viewport.
type Rect struct {
	X, Y, Width, Height float64
}
