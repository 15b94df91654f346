// Package jsdom is bellcheck's only door to the browser's JavaScript API:
// canvas pixels, element properties and geometry, the URL fragment and local
// storage, the clipboard, downloads, PNG rendering of an SVG, the height
// messages of the embed view and the JavaScript API on window. Every call
// goes through
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

// ErrUnsupported is returned when the browser lacks an API the call needs.
var ErrUnsupported = errors.New("jsdom: the browser does not offer")

// ErrNoClipboard is returned by CopyText when the browser offers no
// clipboard API (for instance on a page served over plain HTTP).
var ErrNoClipboard = errors.New("jsdom: the browser offers no clipboard here")

// ErrClipboardRefused is returned by CopyText when the browser refuses to
// write to the clipboard.
var ErrClipboardRefused = errors.New("jsdom: the browser refused to write to the clipboard")

// Rect is an element's box in CSS pixels relative to the viewport.
type Rect struct {
	X, Y, Width, Height float64
}

// ErrNoFile is returned when a file input or a drop holds no file.
var ErrNoFile = errors.New("jsdom: no file was given")

// ErrTooLarge is returned for a file larger than the caller accepts.
var ErrTooLarge = errors.New("jsdom: the file is too large")
