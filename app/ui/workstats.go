package ui

import (
	"runtime"
	"time"
)

// gcStats is the Go runtime's account of memory work so far: the CPU time
// of garbage collection, the collections, the bytes allocated and the heap
// in use. The runner reads it around each phase of an analysis and
// attaches the differences to its performance marks, so a script can split
// the page's time (wasm/page_timing_test.go).
//
// It reads runtime.ReadMemStats, not runtime/metrics: the first
// metrics.Read builds the runtime's table of every metric in one function
// of 29 KB, which the browser then optimised on its compiler threads for
// about 0.3 s during each cold load (V8's per-function compile times,
// DEVELOPERS.md "What keeps the page's thread free").
type gcStats struct {
	gc     time.Duration
	cycles uint64
	alloc  uint64
	heap   uint64
}

// programStart is about when the program began (its packages'
// initialisation), for GCCPUFraction's account of the time since then.
var programStart = time.Now()

// readGC reads the runtime's statistics (a brief stop of the program: a
// few microseconds on the page's one thread).
func readGC() gcStats {
	var m runtime.MemStats
	runtime.ReadMemStats(&m)
	// GCCPUFraction is the collector's share of the CPU time from the
	// program's start to the end of the last collection: their product is
	// the collector's time, which changes only when a collection ends.
	var gc time.Duration
	if m.NumGC > 0 {
		cpu := float64(time.Unix(0, int64(m.LastGC)).Sub(programStart)) * float64(runtime.GOMAXPROCS(0))
		gc = time.Duration(m.GCCPUFraction * cpu)
	}
	return gcStats{
		gc:     gc,
		cycles: uint64(m.NumGC),
		alloc:  m.TotalAlloc,
		heap:   m.HeapAlloc,
	}
}

// detail returns the work between an earlier reading and g as a mark's
// detail: gc_ms, gc_cycles, alloc_mb and, as of g, heap_mb (the heap's
// objects, live or not yet collected).
func (g gcStats) detail(since gcStats) map[string]float64 {
	return map[string]float64{
		"gc_ms":     millis(g.gc - since.gc),
		"gc_cycles": float64(g.cycles - since.cycles),
		"alloc_mb":  float64(g.alloc-since.alloc) / (1 << 20),
		"heap_mb":   float64(g.heap) / (1 << 20),
	}
}

// millis is d in milliseconds.
func millis(d time.Duration) float64 { return float64(d) / float64(time.Millisecond) }
