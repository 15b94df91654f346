//go:build !(js && wasm)

package jsdom

import "runtime"

// Yield lets other goroutines run; natively the scheduler is preemptive and
// there is no browser to yield to.
func Yield() { runtime.Gosched() }
