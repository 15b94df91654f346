//go:build js && wasm

package jsdom

import (
	"sync"
	"time"

	"github.com/hack-pad/safejs"
)

// yielding is the channel Yield hands control to the browser through: a
// message posted on port comes back as a task of the browser's event loop,
// whose handler wakes the oldest waiter.
var yielding struct {
	once    sync.Once
	port    safejs.Value
	ok      bool
	mu      sync.Mutex
	waiters []chan struct{}
}

// Yield lets the browser run its pending tasks (input, rendering, timers)
// and returns as soon as it has: Go's WebAssembly is not preemptive, so a
// long computation on the page's thread pauses itself this way. The pause is
// a message through a MessageChannel, not a timer: browsers hold back a
// timer nested in timers to at least 4 ms, a message by nothing. Without a
// MessageChannel it sleeps a millisecond (a timer).
func Yield() {
	yielding.once.Do(setupYield)
	if !yielding.ok {
		time.Sleep(time.Millisecond)
		return
	}
	wake := make(chan struct{})
	yielding.mu.Lock()
	yielding.waiters = append(yielding.waiters, wake)
	yielding.mu.Unlock()
	if _, err := yielding.port.Call("postMessage", 0); err != nil {
		yielding.mu.Lock()
		yielding.waiters = yielding.waiters[:len(yielding.waiters)-1]
		yielding.mu.Unlock()
		time.Sleep(time.Millisecond)
		return
	}
	<-wake
}

// setupYield opens the MessageChannel: messages posted on port2 arrive at
// port1, whose handler wakes one waiter per message (messages keep their
// order, so the waiters wake in theirs).
func setupYield() {
	ctor, err := safejs.Global().Get("MessageChannel")
	if err != nil || ctor.IsUndefined() || ctor.IsNull() {
		return
	}
	ch, err := ctor.New()
	if err != nil {
		return
	}
	in, err := ch.Get("port1")
	if err != nil {
		return
	}
	out, err := ch.Get("port2")
	if err != nil {
		return
	}
	fn, err := safejs.FuncOf(func(this safejs.Value, args []safejs.Value) any {
		yielding.mu.Lock()
		defer yielding.mu.Unlock()
		if len(yielding.waiters) > 0 {
			close(yielding.waiters[0])
			yielding.waiters = yielding.waiters[1:]
		}
		return nil
	})
	if err != nil {
		return
	}
	if err := in.Set("onmessage", fn); err != nil {
		fn.Release()
		return
	}
	yielding.port, yielding.ok = out, true
}
