//go:build js && wasm

package jsdom

import (
	"fmt"

	"github.com/hack-pad/safejs"
)

// element returns the element with the given id.
func element(id string) (safejs.Value, error) {
	doc, err := safejs.Global().Get("document")
	if err != nil {
		return safejs.Value{}, err
	}
	el, err := doc.Call("getElementById", id)
	if err != nil {
		return safejs.Value{}, err
	}
	if el.IsNull() || el.IsUndefined() {
		return safejs.Value{}, fmt.Errorf("%w: %q", ErrNoElement, id)
	}
	return el, nil
}

// DrawRGBA sets the canvas with the given id to width by height pixels and
// fills it with pixels (row-major RGBA, 4*width*height bytes) through
// ImageData.
func DrawRGBA(canvasID string, width, height int, pixels []byte) error {
	if len(pixels) != 4*width*height || width <= 0 || height <= 0 {
		return fmt.Errorf("jsdom: %d bytes for a %dx%d image", len(pixels), width, height)
	}
	canvas, err := element(canvasID)
	if err != nil {
		return err
	}
	if w, err := canvas.Get("width"); err == nil {
		if n, err := w.Int(); err != nil || n != width {
			if err := canvas.Set("width", width); err != nil {
				return err
			}
		}
	}
	if h, err := canvas.Get("height"); err == nil {
		if n, err := h.Int(); err != nil || n != height {
			if err := canvas.Set("height", height); err != nil {
				return err
			}
		}
	}
	ctx, err := canvas.Call("getContext", "2d")
	if err != nil {
		return err
	}
	if ctx.IsNull() {
		return fmt.Errorf("jsdom: canvas %q has no 2d context", canvasID)
	}
	clamped, err := safejs.Global().Get("Uint8ClampedArray")
	if err != nil {
		return err
	}
	arr, err := clamped.New(len(pixels))
	if err != nil {
		return err
	}
	if _, err := safejs.CopyBytesToJS(arr, pixels); err != nil {
		return err
	}
	imageData, err := safejs.Global().Get("ImageData")
	if err != nil {
		return err
	}
	img, err := imageData.New(arr, width, height)
	if err != nil {
		return err
	}
	_, err = ctx.Call("putImageData", img, 0, 0)
	return err
}

// SetValue sets the value property of the element with the given id (a
// textarea or input), leaving the browser's undo history to the browser.
func SetValue(id, value string) error {
	el, err := element(id)
	if err != nil {
		return err
	}
	return el.Set("value", value)
}

// SetText sets the text content of the element with the given id.
func SetText(id, text string) error {
	el, err := element(id)
	if err != nil {
		return err
	}
	return el.Set("textContent", text)
}

// Value returns the value property of the element with the given id.
func Value(id string) (string, error) {
	el, err := element(id)
	if err != nil {
		return "", err
	}
	v, err := el.Get("value")
	if err != nil {
		return "", err
	}
	return v.String()
}

// BoundingRect returns the element's getBoundingClientRect.
func BoundingRect(id string) (Rect, error) {
	el, err := element(id)
	if err != nil {
		return Rect{}, err
	}
	r, err := el.Call("getBoundingClientRect")
	if err != nil {
		return Rect{}, err
	}
	var out Rect
	for _, f := range []struct {
		name string
		dst  *float64
	}{{"left", &out.X}, {"top", &out.Y}, {"width", &out.Width}, {"height", &out.Height}} {
		v, err := r.Get(f.name)
		if err != nil {
			return Rect{}, err
		}
		if *f.dst, err = v.Float(); err != nil {
			return Rect{}, err
		}
	}
	return out, nil
}

// Focus moves the keyboard focus to the element with the given id.
func Focus(id string) error {
	el, err := element(id)
	if err != nil {
		return err
	}
	_, err = el.Call("focus")
	return err
}

// Available reports whether the browser's API is reachable.
func Available() bool { return true }

// Checked returns the checked property of the element with the given id (a
// checkbox).
func Checked(id string) (bool, error) {
	el, err := element(id)
	if err != nil {
		return false, err
	}
	v, err := el.Get("checked")
	if err != nil {
		return false, err
	}
	return v.Bool()
}

// SetValidity sets the element's custom validity message ("" for valid), so
// the browser marks an input whose text is not acceptable.
func SetValidity(id, message string) error {
	el, err := element(id)
	if err != nil {
		return err
	}
	_, err = el.Call("setCustomValidity", message)
	return err
}

// Fragment returns the page URL's fragment without the '#'.
func Fragment() (string, error) {
	loc, err := safejs.Global().Get("location")
	if err != nil {
		return "", err
	}
	h, err := loc.Get("hash")
	if err != nil {
		return "", err
	}
	s, err := h.String()
	if err != nil {
		return "", err
	}
	if len(s) > 0 && s[0] == '#' {
		s = s[1:]
	}
	return s, nil
}

// ReplaceFragment sets the page URL's fragment without adding a history
// entry or reloading ("" removes it).
func ReplaceFragment(fragment string) error {
	hist, err := safejs.Global().Get("history")
	if err != nil {
		return err
	}
	loc, err := safejs.Global().Get("location")
	if err != nil {
		return err
	}
	path, err := loc.Get("pathname")
	if err != nil {
		return err
	}
	p, err := path.String()
	if err != nil {
		return err
	}
	search, err := loc.Get("search")
	if err != nil {
		return err
	}
	q, err := search.String()
	if err != nil {
		return err
	}
	url := p + q
	if fragment != "" {
		url += "#" + fragment
	}
	_, err = hist.Call("replaceState", safejs.Null(), "", url)
	return err
}

// storage returns window.localStorage (access may throw, for instance
// when the browser blocks storage).
func storage() (safejs.Value, error) { return storageNamed("localStorage") }

// storageNamed returns window[name], a Storage.
func storageNamed(name string) (safejs.Value, error) {
	st, err := safejs.Global().Get(name)
	if err != nil {
		return safejs.Value{}, err
	}
	if st.IsNull() || st.IsUndefined() {
		return safejs.Value{}, ErrNoStorage
	}
	return st, nil
}

// LoadItem reads a key from the browser's local storage; ok is false when
// the key is absent.
func LoadItem(key string) (value string, ok bool, err error) {
	st, err := storage()
	if err != nil {
		return "", false, err
	}
	v, err := st.Call("getItem", key)
	if err != nil {
		return "", false, err
	}
	if v.IsNull() || v.IsUndefined() {
		return "", false, nil
	}
	s, err := v.String()
	return s, err == nil, err
}

// SaveItem writes a key to the browser's local storage (it fails when the
// storage is full or blocked).
func SaveItem(key, value string) error {
	st, err := storage()
	if err != nil {
		return err
	}
	_, err = st.Call("setItem", key, value)
	return err
}

// OnHashChange calls f whenever the user changes the URL's fragment (a
// pasted link, the back button); replaceState does not count. f runs in the
// browser's event handler: hand the work to the page's goroutine.
func OnHashChange(f func()) error {
	fn, err := safejs.FuncOf(func(this safejs.Value, args []safejs.Value) any {
		f()
		return nil
	})
	if err != nil {
		return err
	}
	_, err = safejs.Global().Call("addEventListener", "hashchange", fn.Value())
	return err
}

// StorageKeys lists the keys of the browser's local storage.
func StorageKeys() ([]string, error) {
	st, err := storage()
	if err != nil {
		return nil, err
	}
	lv, err := st.Get("length")
	if err != nil {
		return nil, err
	}
	n, err := lv.Int()
	if err != nil {
		return nil, err
	}
	keys := make([]string, 0, n)
	for i := 0; i < n; i++ {
		k, err := st.Call("key", i)
		if err != nil {
			return keys, err
		}
		if k.IsNull() || k.IsUndefined() {
			continue // removed by another tab meanwhile
		}
		s, err := k.String()
		if err != nil {
			return keys, err
		}
		keys = append(keys, s)
	}
	return keys, nil
}

// RemoveItem deletes a key of the browser's local storage.
func RemoveItem(key string) error {
	st, err := storage()
	if err != nil {
		return err
	}
	_, err = st.Call("removeItem", key)
	return err
}

// OnStorage calls f whenever another tab of the same site changes the local
// storage. f runs in the browser's event handler: hand the work to the
// page's goroutine.
func OnStorage(f func()) error {
	fn, err := safejs.FuncOf(func(this safejs.Value, args []safejs.Value) any {
		f()
		return nil
	})
	if err != nil {
		return err
	}
	_, err = safejs.Global().Call("addEventListener", "storage", fn.Value())
	return err
}

// LoadSessionItem reads a key of the tab's session storage (kept across
// reloads of the tab); ok is false when the key is absent.
func LoadSessionItem(key string) (value string, ok bool, err error) {
	st, err := storageNamed("sessionStorage")
	if err != nil {
		return "", false, err
	}
	v, err := st.Call("getItem", key)
	if err != nil {
		return "", false, err
	}
	if v.IsNull() || v.IsUndefined() {
		return "", false, nil
	}
	s, err := v.String()
	return s, err == nil, err
}

// SaveSessionItem writes a key of the tab's session storage.
func SaveSessionItem(key, value string) error {
	st, err := storageNamed("sessionStorage")
	if err != nil {
		return err
	}
	_, err = st.Call("setItem", key, value)
	return err
}

// OnLeave calls f when the page may be about to go away: the window's
// pagehide (the tab closes, the page is left or reloaded) and the
// document becoming hidden (another tab, the window minimised; on mobile
// the last moment a page is sure to run). f runs synchronously in the
// browser's event handler, before the page is gone: it must do its work
// at once, not hand it to the page's goroutine.
func OnLeave(f func()) error {
	fn, err := safejs.FuncOf(func(this safejs.Value, args []safejs.Value) any {
		if len(args) > 0 {
			if t, err := args[0].Get("type"); err == nil {
				if s, err := t.String(); err == nil && s == "visibilitychange" && !documentHidden() {
					return nil
				}
			}
		}
		f()
		return nil
	})
	if err != nil {
		return err
	}
	if _, err := safejs.Global().Call("addEventListener", "pagehide", fn.Value()); err != nil {
		return err
	}
	doc, err := safejs.Global().Get("document")
	if err != nil {
		return err
	}
	_, err = doc.Call("addEventListener", "visibilitychange", fn.Value())
	return err
}

// documentHidden reports whether the document's visibilityState is
// "hidden".
func documentHidden() bool {
	doc, err := safejs.Global().Get("document")
	if err != nil {
		return false
	}
	v, err := doc.Get("visibilityState")
	if err != nil {
		return false
	}
	s, err := v.String()
	return err == nil && s == "hidden"
}
