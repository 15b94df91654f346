//go:build !(js && wasm)

package jsdom

// Mark records a performance mark; natively it returns ErrNoBrowser.
func Mark(name string) error { return ErrNoBrowser }
