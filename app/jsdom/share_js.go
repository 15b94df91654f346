//go:build js && wasm

package jsdom

import (
	"fmt"
	"math"
	"time"

	"github.com/hack-pad/safejs"
)

// global returns window[name].
func global(name string) (safejs.Value, error) {
	v, err := safejs.Global().Get(name)
	if err != nil {
		return safejs.Value{}, err
	}
	if v.IsUndefined() || v.IsNull() {
		return safejs.Value{}, fmt.Errorf("%w: %s", ErrUnsupported, name)
	}
	return v, nil
}

// PageURL returns the page's address without its fragment.
func PageURL() (string, error) {
	loc, err := global("location")
	if err != nil {
		return "", err
	}
	var parts [3]string
	for i, k := range []string{"origin", "pathname", "search"} {
		v, err := loc.Get(k)
		if err != nil {
			return "", err
		}
		if parts[i], err = v.String(); err != nil {
			return "", err
		}
	}
	origin := parts[0]
	if origin == "null" { // file: pages
		href, err := loc.Get("href")
		if err != nil {
			return "", err
		}
		s, err := href.String()
		if err != nil {
			return "", err
		}
		for i := 0; i < len(s); i++ {
			if s[i] == '#' {
				return s[:i], nil
			}
		}
		return s, nil
	}
	return origin + parts[1] + parts[2], nil
}

// CopyText writes text to the clipboard and calls done with the outcome
// once the browser has decided (from its event loop: hand the result to
// the page's goroutine). It fails with ErrNoClipboard at once where the
// browser offers no clipboard API (a page served over plain HTTP), and with
// ErrClipboardRefused when the browser refuses the write.
func CopyText(text string, done func(error)) {
	nav, err := global("navigator")
	if err != nil {
		done(err)
		return
	}
	clip, err := nav.Get("clipboard")
	if err != nil || clip.IsUndefined() || clip.IsNull() {
		done(ErrNoClipboard)
		return
	}
	promise, err := clip.Call("writeText", text)
	if err != nil {
		done(fmt.Errorf("%w: %v", ErrClipboardRefused, err))
		return
	}
	var ok, fail safejs.Func
	release := func() { ok.Release(); fail.Release() }
	ok, err = safejs.FuncOf(func(this safejs.Value, args []safejs.Value) any {
		release()
		done(nil)
		return nil
	})
	if err != nil {
		done(err)
		return
	}
	fail, err = safejs.FuncOf(func(this safejs.Value, args []safejs.Value) any {
		release()
		msg := "refused"
		if len(args) > 0 {
			msg = describe(args[0])
		}
		done(fmt.Errorf("%w: %s", ErrClipboardRefused, msg))
		return nil
	})
	if err != nil {
		ok.Release()
		done(err)
		return
	}
	if _, err := promise.Call("then", ok.Value(), fail.Value()); err != nil {
		release()
		done(err)
	}
}

// describe returns a JavaScript value's message (an Error's) or its text.
func describe(v safejs.Value) string {
	if m, err := v.Get("message"); err == nil && m.Type() == safejs.TypeString {
		if s, err := m.String(); err == nil {
			return s
		}
	}
	if s, err := v.String(); err == nil {
		return s
	}
	return "unknown error"
}

// SelectText focuses the text field with the given id and selects its
// whole text, then asks the browser to copy the selection (the way pages
// copied before the clipboard API). copied reports whether the browser says
// it did; either way the text stays selected for the user to copy.
func SelectText(id string) (copied bool, err error) {
	el, err := element(id)
	if err != nil {
		return false, err
	}
	if _, err := el.Call("focus"); err != nil {
		return false, err
	}
	if _, err := el.Call("select"); err != nil {
		return false, err
	}
	doc, err := global("document")
	if err != nil {
		return false, nil
	}
	r, err := doc.Call("execCommand", "copy")
	if err != nil {
		return false, nil
	}
	ok, err := r.Bool()
	return ok && err == nil, nil
}

// blobOf returns a Blob holding data with the given type.
func blobOf(mime string, data []byte) (safejs.Value, error) {
	u8, err := global("Uint8Array")
	if err != nil {
		return safejs.Value{}, err
	}
	arr, err := u8.New(len(data))
	if err != nil {
		return safejs.Value{}, err
	}
	if _, err := safejs.CopyBytesToJS(arr, data); err != nil {
		return safejs.Value{}, err
	}
	return blobOfParts(mime, arr)
}

func blobOfParts(mime string, part any) (safejs.Value, error) {
	arrayCtor, err := global("Array")
	if err != nil {
		return safejs.Value{}, err
	}
	parts, err := arrayCtor.New()
	if err != nil {
		return safejs.Value{}, err
	}
	if _, err := parts.Call("push", part); err != nil {
		return safejs.Value{}, err
	}
	opts, err := safejs.ValueOf(map[string]any{"type": mime})
	if err != nil {
		return safejs.Value{}, err
	}
	blobCtor, err := global("Blob")
	if err != nil {
		return safejs.Value{}, err
	}
	return blobCtor.New(parts, opts)
}

// revokeAfter is how long an object URL handed to a download lives.
const revokeAfter = time.Minute

// downloadBlob saves a Blob under filename through an object URL and a
// temporary link.
func downloadBlob(filename string, blob safejs.Value) error {
	urlAPI, err := global("URL")
	if err != nil {
		return err
	}
	u, err := urlAPI.Call("createObjectURL", blob)
	if err != nil {
		return err
	}
	revoke := func() { _, _ = urlAPI.Call("revokeObjectURL", u) }
	doc, err := global("document")
	if err != nil {
		revoke()
		return err
	}
	a, err := doc.Call("createElement", "a")
	if err != nil {
		revoke()
		return err
	}
	for k, v := range map[string]string{"download": filename, "rel": "noopener"} {
		if err := a.Set(k, v); err != nil {
			revoke()
			return err
		}
	}
	if err := a.Set("href", u); err != nil {
		revoke()
		return err
	}
	body, err := doc.Get("body")
	if err != nil {
		revoke()
		return err
	}
	if _, err := body.Call("appendChild", a); err != nil {
		revoke()
		return err
	}
	_, err = a.Call("click")
	_, _ = body.Call("removeChild", a)
	// The browser reads the URL after the click returns: free it later.
	time.AfterFunc(revokeAfter, revoke)
	return err
}

// Download saves data under filename (the browser's download) through a
// Blob of the given MIME type and an object URL.
func Download(filename, mime string, data []byte) error {
	blob, err := blobOf(mime, data)
	if err != nil {
		return err
	}
	return downloadBlob(filename, blob)
}

// CanvasDataURL returns the canvas's pixels as a PNG data URL.
func CanvasDataURL(canvasID string) (string, error) {
	canvas, err := element(canvasID)
	if err != nil {
		return "", err
	}
	v, err := canvas.Call("toDataURL", "image/png")
	if err != nil {
		return "", err
	}
	return v.String()
}

// MaxPNGPixels bounds the size of a PNG export.
const MaxPNGPixels = 16 << 20

// DownloadPNG draws an SVG document on a canvas of width by height pixels
// over a white background (through an image read from an object URL) and
// saves the canvas as a PNG under filename. done receives the outcome, from
// the browser's event loop.
func DownloadPNG(filename, svg string, width, height int, done func(error)) {
	if width <= 0 || height <= 0 || width*height > MaxPNGPixels {
		done(fmt.Errorf("jsdom: a PNG of %dx%d pixels", width, height))
		return
	}
	blob, err := blobOfParts("image/svg+xml", svg)
	if err != nil {
		done(err)
		return
	}
	urlAPI, err := global("URL")
	if err != nil {
		done(err)
		return
	}
	u, err := urlAPI.Call("createObjectURL", blob)
	if err != nil {
		done(err)
		return
	}
	imgCtor, err := global("Image")
	if err != nil {
		done(err)
		return
	}
	img, err := imgCtor.New()
	if err != nil {
		done(err)
		return
	}
	var onload, onerror, onblob safejs.Func
	finish := func(err error) {
		onload.Release()
		onerror.Release()
		_, _ = urlAPI.Call("revokeObjectURL", u)
		if err != nil {
			onblob.Release()
			done(err)
		}
	}
	onblob, err = safejs.FuncOf(func(this safejs.Value, args []safejs.Value) any {
		onblob.Release()
		if len(args) == 0 || args[0].IsNull() || args[0].IsUndefined() {
			done(fmt.Errorf("jsdom: the browser made no PNG"))
			return nil
		}
		done(downloadBlob(filename, args[0]))
		return nil
	})
	if err != nil {
		done(err)
		return
	}
	onload, err = safejs.FuncOf(func(this safejs.Value, args []safejs.Value) any {
		finish(drawToPNG(img, width, height, onblob))
		return nil
	})
	if err != nil {
		onblob.Release()
		done(err)
		return
	}
	onerror, err = safejs.FuncOf(func(this safejs.Value, args []safejs.Value) any {
		finish(fmt.Errorf("jsdom: the browser could not read the SVG"))
		return nil
	})
	if err != nil {
		onload.Release()
		onblob.Release()
		done(err)
		return
	}
	if err := img.Set("onload", onload.Value()); err != nil {
		finish(err)
		return
	}
	if err := img.Set("onerror", onerror.Value()); err != nil {
		finish(err)
		return
	}
	if err := img.Set("src", u); err != nil {
		finish(err)
	}
}

// drawToPNG paints img on a new canvas over white and asks for its PNG.
func drawToPNG(img safejs.Value, width, height int, onblob safejs.Func) error {
	doc, err := global("document")
	if err != nil {
		return err
	}
	canvas, err := doc.Call("createElement", "canvas")
	if err != nil {
		return err
	}
	if err := canvas.Set("width", width); err != nil {
		return err
	}
	if err := canvas.Set("height", height); err != nil {
		return err
	}
	ctx, err := canvas.Call("getContext", "2d")
	if err != nil {
		return err
	}
	if ctx.IsNull() {
		return fmt.Errorf("jsdom: no 2d context for the PNG")
	}
	if err := ctx.Set("fillStyle", "#ffffff"); err != nil {
		return err
	}
	if _, err := ctx.Call("fillRect", 0, 0, width, height); err != nil {
		return err
	}
	if _, err := ctx.Call("drawImage", img, 0, 0, width, height); err != nil {
		return err
	}
	_, err = canvas.Call("toBlob", onblob.Value(), "image/png")
	return err
}

// heightWatch is the state of ReportHeight: the observer, the element it
// watches and the last height sent.
var heightWatch struct {
	obs   safejs.Value
	fn    safejs.Func
	el    safejs.Value
	has   bool
	last  int
	ready bool
}

// Framed reports whether the page runs inside a frame (an iframe of another
// page).
func Framed() bool {
	win := safejs.Global()
	top, err := win.Get("top")
	if err != nil {
		return true // a cross-origin top that cannot be read is a frame
	}
	self, err := win.Get("self")
	if err != nil {
		return false
	}
	return !top.Equal(self)
}

// ReportHeight sends the height of the element with the given id to the
// parent page whenever it changes, as the message
//
//	{bellcheck: "height", value: N}
//
// (N in CSS pixels, an integer), so the parent can size the iframe. It
// watches the element with a ResizeObserver and sends the height now; call
// it again after the element may have been replaced. Outside a frame it
// does nothing. The message carries nothing but the height; it goes to the
// parent window with the target origin "*", since the page cannot know
// which site embeds it and the height tells that site nothing secret.
func ReportHeight(id string) error {
	if !Framed() {
		return nil
	}
	el, err := element(id)
	if err != nil {
		return err
	}
	w := &heightWatch
	if w.has && w.el.Equal(el) {
		postHeight()
		return nil
	}
	if !w.ready {
		w.fn, err = safejs.FuncOf(func(this safejs.Value, args []safejs.Value) any {
			postHeight()
			return nil
		})
		if err != nil {
			return err
		}
		if ro, err := safejs.Global().Get("ResizeObserver"); err == nil && !ro.IsUndefined() {
			if w.obs, err = ro.New(w.fn.Value()); err != nil {
				return err
			}
		}
		w.ready = true
	}
	if w.has && !w.obs.IsUndefined() {
		_, _ = w.obs.Call("disconnect")
	}
	w.el, w.has = el, true
	if !w.obs.IsUndefined() {
		if _, err := w.obs.Call("observe", el); err != nil {
			return err
		}
	}
	postHeight()
	return nil
}

// postHeight sends the watched element's height if it changed.
func postHeight() {
	w := &heightWatch
	if !w.has {
		return
	}
	h := 0.0
	if r, err := w.el.Call("getBoundingClientRect"); err == nil {
		if v, err := r.Get("height"); err == nil {
			h, _ = v.Float()
		}
	}
	if v, err := w.el.Get("scrollHeight"); err == nil {
		if s, err := v.Float(); err == nil {
			h = max(h, s)
		}
	}
	n := int(math.Ceil(h))
	if n <= 0 || n == w.last {
		return
	}
	parent, err := safejs.Global().Get("parent")
	if err != nil {
		return
	}
	msg, err := safejs.ValueOf(map[string]any{"bellcheck": "height", "value": n})
	if err != nil {
		return
	}
	if _, err := parent.Call("postMessage", msg, "*"); err == nil {
		w.last = n
	}
}
