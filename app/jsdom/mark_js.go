//go:build js && wasm

package jsdom

import "github.com/hack-pad/safejs"

// Mark records a performance mark of the given name (performance.mark), for
// timing the page from a trace or a script.
func Mark(name string) error {
	perf, err := safejs.Global().Get("performance")
	if err != nil {
		return err
	}
	if perf.IsUndefined() || perf.IsNull() {
		return ErrUnsupported
	}
	_, err = perf.Call("mark", name)
	return err
}
