//go:build js && wasm

package jsdom

import (
	"fmt"

	"github.com/hack-pad/safejs"
)

// AsyncFunc is a Go function behind a JavaScript function that returns a
// Promise: it receives each argument as its JSON text (JSON.stringify; ""
// for undefined) and returns JSON text, which resolves the Promise parsed
// (JSON.parse), or an error, which rejects it with an Error holding the
// error's message. It runs on its own goroutine. An argument with no JSON
// text (a BigInt, a function, a symbol, an object whose toJSON or getter
// throws, a cycle) rejects the Promise with a message saying which
// argument and why, before f is called.
type AsyncFunc func(args []string) (string, error)

// ExposeAPI sets window[name] to an object holding the given string
// properties and one Promise-returning function per entry of funcs. No
// argument and no failure of f can end the Go program: JavaScript
// exceptions come back as errors and Go panics are recovered, both as a
// rejected Promise.
func ExposeAPI(name string, props map[string]string, funcs map[string]AsyncFunc) error {
	objCtor, err := global("Object")
	if err != nil {
		return err
	}
	obj, err := objCtor.New()
	if err != nil {
		return err
	}
	for k, v := range props {
		if err := obj.Set(k, v); err != nil {
			return err
		}
	}
	for k, f := range funcs {
		fn, err := safejs.FuncOf(func(this safejs.Value, args []safejs.Value) (out any) {
			defer func() {
				if r := recover(); r != nil {
					out = rejected(fmt.Sprintf("bellcheck: internal error: %v", r))
				}
			}()
			return promise(f, args)
		})
		if err != nil {
			return err
		}
		if err := obj.Set(k, fn.Value()); err != nil {
			return err
		}
	}
	if _, err := objCtor.Call("freeze", obj); err != nil {
		return err
	}
	return safejs.Global().Set(name, obj)
}

// ErrAPIArgument is the start of the message of a Promise rejected for an
// argument that has no JSON text.
const ErrAPIArgument = "bellcheck: bad arguments"

// typeOf returns the JavaScript type of v without panicking: Go's
// syscall/js panics on a type it does not know (a BigInt), and that panic
// would end the program.
func typeOf(v safejs.Value) (t safejs.Type, known bool) {
	defer func() {
		if recover() != nil {
			known = false
		}
	}()
	return v.Type(), true
}

// argText returns an argument's JSON text ("" for undefined), or why it
// has none.
func argText(jsonAPI, a safejs.Value) (string, error) {
	t, known := typeOf(a)
	switch {
	case !known:
		return "", fmt.Errorf("is a BigInt (or another value with no JSON form); pass a number or a string")
	case t == safejs.TypeUndefined:
		return "", nil
	case t == safejs.TypeFunction:
		return "", fmt.Errorf("is a function; pass a string or a plain object")
	case t == safejs.TypeSymbol:
		return "", fmt.Errorf("is a symbol; pass a string or a plain object")
	}
	s, err := jsonAPI.Call("stringify", a)
	if err != nil {
		return "", fmt.Errorf("cannot be turned into JSON (%v)", err)
	}
	if st, ok := typeOf(s); !ok || st != safejs.TypeString {
		return "", fmt.Errorf("has no JSON form")
	}
	return s.String()
}

// promise checks the arguments, runs f on a goroutine and returns a
// Promise of its outcome.
func promise(f AsyncFunc, args []safejs.Value) any {
	jsonAPI, err := global("JSON")
	if err != nil {
		return rejected("bellcheck: the browser offers no JSON")
	}
	texts := make([]string, len(args))
	for i, a := range args {
		if texts[i], err = argText(jsonAPI, a); err != nil {
			return rejected(fmt.Sprintf("%s: argument %d %v", ErrAPIArgument, i+1, err))
		}
	}
	return newPromise(func(resolve, reject safejs.Value) {
		go func() {
			defer func() {
				if r := recover(); r != nil {
					rejectWith(reject, fmt.Sprintf("bellcheck: internal error: %v", r))
				}
			}()
			out, err := f(texts)
			if err == nil {
				var v safejs.Value
				if v, err = jsonAPI.Call("parse", out); err == nil {
					_, _ = resolve.Invoke(v)
					return
				}
			}
			rejectWith(reject, err.Error())
		}()
	})
}

// newPromise returns new Promise(executor), where start receives resolve
// and reject; nil when the browser offers no Promise.
func newPromise(start func(resolve, reject safejs.Value)) any {
	promiseCtor, err := global("Promise")
	if err != nil {
		return nil
	}
	executor, err := safejs.FuncOf(func(this safejs.Value, pargs []safejs.Value) any {
		if len(pargs) >= 2 {
			start(pargs[0], pargs[1])
		}
		return nil
	})
	if err != nil {
		return nil
	}
	p, err := promiseCtor.New(executor.Value())
	executor.Release() // the executor has run inside the constructor
	if err != nil {
		return nil
	}
	return p
}

// rejected returns a Promise rejected with new Error(msg).
func rejected(msg string) any {
	return newPromise(func(resolve, reject safejs.Value) { rejectWith(reject, msg) })
}

// rejectWith rejects a Promise with new Error(msg).
func rejectWith(reject safejs.Value, msg string) {
	errCtor, err := global("Error")
	if err != nil {
		_, _ = reject.Invoke(msg)
		return
	}
	e, err := errCtor.New(msg)
	if err != nil {
		_, _ = reject.Invoke(msg)
		return
	}
	_, _ = reject.Invoke(e)
}

// DispatchEvent fires a plain event of the given type on window, so scripts
// can wait for the API: window.addEventListener(type, ...).
func DispatchEvent(eventType string) error {
	evCtor, err := global("Event")
	if err != nil {
		return err
	}
	ev, err := evCtor.New(eventType)
	if err != nil {
		return err
	}
	_, err = safejs.Global().Call("dispatchEvent", ev)
	return err
}
