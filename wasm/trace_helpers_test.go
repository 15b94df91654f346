//go:build (browser || benchharness) && !(js && wasm)

package main

// A chromium performance trace of a tab, for the browser tests and the
// bench harness.

import (
	"encoding/json"
	"sync"
	"testing"
	"time"

	"github.com/chromedp/cdproto/cdp"
	"github.com/chromedp/cdproto/tracing"
	"github.com/chromedp/chromedp"
)

// trace collects a chromium performance trace of a tab.
type trace struct {
	mu     sync.Mutex
	events []traceEvent
	done   chan struct{}
	ended  bool // the trace completed: later events are another trace's
}

// end stops the tab's trace and waits for its events.
func (tr *trace) end(t *testing.T, tb *tab) {
	t.Helper()
	if _, err := chromedp.Call(tb.ctx, tracing.End, cdp.Empty{}); err != nil {
		t.Fatal(err)
	}
	select {
	case <-tr.done:
	case <-time.After(60 * time.Second):
		t.Fatal("the trace did not complete")
	}
}

// traceEvent is the part of a trace event the tests read.
type traceEvent struct {
	Name string  `json:"name"`
	Cat  string  `json:"cat"`
	Ph   string  `json:"ph"`
	Ts   float64 `json:"ts"`   // µs
	Dur  float64 `json:"dur"`  // µs
	Tdur float64 `json:"tdur"` // µs of the thread's CPU
	Tid  int64   `json:"tid"`
	Args struct {
		Name string `json:"name"`
	} `json:"args"`
}

// startTrace starts a trace of the tab's events in the given categories
// (by default the page's tasks, its marks and the timeline's events).
func startTrace(t *testing.T, tb *tab, categories ...string) *trace {
	if len(categories) == 0 {
		categories = []string{"toplevel", "blink.user_timing", "__metadata", "devtools.timeline"}
	}
	tr := &trace{done: make(chan struct{})}
	if err := chromedp.Listen(tb.ctx, func(ev any) {
		switch e := ev.(type) {
		case *tracing.EventDataCollected:
			tr.mu.Lock()
			for _, raw := range e.Value {
				if tr.ended {
					break
				}
				var te traceEvent
				if json.Unmarshal(raw, &te) == nil {
					tr.events = append(tr.events, te)
				}
			}
			tr.mu.Unlock()
		case *tracing.EventTracingComplete:
			tr.mu.Lock()
			if !tr.ended {
				tr.ended = true
				close(tr.done)
			}
			tr.mu.Unlock()
		}
	}); err != nil {
		t.Fatal(err)
	}
	if _, err := chromedp.Call(tb.ctx, tracing.Start, tracing.StartParams{
		TransferMode: tracing.StartTransferModeReportEvents,
		TraceConfig:  &tracing.TraceConfig{IncludedCategories: categories},
	}); err != nil {
		t.Fatal(err)
	}
	return tr
}
