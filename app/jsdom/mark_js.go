//go:build js && wasm

package jsdom

import "github.com/hack-pad/safejs"

// Mark records a performance mark of the given name (performance.mark), for
// timing the page from a trace or a script.
func Mark(name string) error { return MarkDetail(name, nil) }

// MarkDetail records a performance mark with numbers attached as its
// detail (performance.mark(name, {detail})), for a script to read back.
func MarkDetail(name string, detail map[string]float64) error {
	perf, err := safejs.Global().Get("performance")
	if err != nil {
		return err
	}
	if perf.IsUndefined() || perf.IsNull() {
		return ErrUnsupported
	}
	if detail == nil {
		_, err = perf.Call("mark", name)
		return err
	}
	d := make(map[string]any, len(detail))
	for k, v := range detail {
		d[k] = v
	}
	opts, err := safejs.ValueOf(map[string]any{"detail": d})
	if err != nil {
		return err
	}
	_, err = perf.Call("mark", name, opts)
	return err
}
