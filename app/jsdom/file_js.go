//go:build js && wasm

package jsdom

import (
	"fmt"

	"github.com/hack-pad/safejs"
)

// ReadInputFile reads the first file chosen in the file input with the
// given id as text and calls done with its name and text (from the
// browser's event loop: hand the result to the page's goroutine). A file
// larger than maxBytes is refused with ErrTooLarge before it is read.
func ReadInputFile(id string, maxBytes int, done func(name, text string, err error)) {
	el, err := element(id)
	if err != nil {
		done("", "", err)
		return
	}
	files, err := el.Get("files")
	if err != nil {
		done("", "", err)
		return
	}
	readFirst(files, maxBytes, done)
}

// OnDropFile makes the element with the given id a drop target for files:
// a file dropped on it is read as text and handed to done as by
// ReadInputFile; other drops are ignored. It registers the listeners once
// per element (a second call for the same element does nothing).
func OnDropFile(id string, maxBytes int, done func(name, text string, err error)) error {
	el, err := element(id)
	if err != nil {
		return err
	}
	if has, err := el.Get("bcDropReady"); err == nil {
		if t, _ := has.Truthy(); t {
			return nil
		}
	}
	over, err := safejs.FuncOf(func(this safejs.Value, args []safejs.Value) any {
		if len(args) > 0 {
			_, _ = args[0].Call("preventDefault")
		}
		return nil
	})
	if err != nil {
		return err
	}
	drop, err := safejs.FuncOf(func(this safejs.Value, args []safejs.Value) any {
		if len(args) == 0 {
			return nil
		}
		ev := args[0]
		_, _ = ev.Call("preventDefault")
		dt, err := ev.Get("dataTransfer")
		if err != nil || dt.IsNull() || dt.IsUndefined() {
			return nil
		}
		files, err := dt.Get("files")
		if err != nil {
			return nil
		}
		if n, err := files.Get("length"); err != nil {
			return nil
		} else if t, _ := n.Truthy(); !t {
			return nil
		}
		readFirst(files, maxBytes, done)
		return nil
	})
	if err != nil {
		over.Release()
		return err
	}
	if _, err := el.Call("addEventListener", "dragover", over.Value()); err != nil {
		return err
	}
	if _, err := el.Call("addEventListener", "drop", drop.Value()); err != nil {
		return err
	}
	return el.Set("bcDropReady", true)
}

// readFirst reads the first file of a FileList as text.
func readFirst(files safejs.Value, maxBytes int, done func(name, text string, err error)) {
	f, err := files.Call("item", 0)
	if err != nil {
		done("", "", err)
		return
	}
	if f.IsNull() || f.IsUndefined() {
		done("", "", ErrNoFile)
		return
	}
	name := ""
	if v, err := f.Get("name"); err == nil && v.Type() == safejs.TypeString {
		name, _ = v.String()
	}
	if v, err := f.Get("size"); err == nil {
		if n, err := v.Int(); err == nil && n > maxBytes {
			done(name, "", fmt.Errorf("%w: %s is %d bytes, more than the %d bytes a data file may have", ErrTooLarge, name, n, maxBytes))
			return
		}
	}
	promise, err := f.Call("text")
	if err != nil {
		done(name, "", err)
		return
	}
	var ok, fail safejs.Func
	release := func() { ok.Release(); fail.Release() }
	ok, err = safejs.FuncOf(func(this safejs.Value, args []safejs.Value) any {
		release()
		text := ""
		if len(args) > 0 && args[0].Type() == safejs.TypeString {
			text, _ = args[0].String()
		}
		done(name, text, nil)
		return nil
	})
	if err != nil {
		done(name, "", err)
		return
	}
	fail, err = safejs.FuncOf(func(this safejs.Value, args []safejs.Value) any {
		release()
		msg := "the browser could not read it"
		if len(args) > 0 {
			msg = describe(args[0])
		}
		done(name, "", fmt.Errorf("jsdom: reading %s: %s", name, msg))
		return nil
	})
	if err != nil {
		ok.Release()
		done(name, "", err)
		return
	}
	if _, err := promise.Call("then", ok.Value(), fail.Value()); err != nil {
		release()
		done(name, "", err)
	}
}
