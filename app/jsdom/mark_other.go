//go:build !(js && wasm)

package jsdom

// Mark records a performance mark; natively it returns ErrNoBrowser.
func Mark(name string) error { return ErrNoBrowser }

// MarkDetail records a performance mark with a detail; natively it returns
// ErrNoBrowser.
func MarkDetail(name string, detail map[string]float64) error { return ErrNoBrowser }
