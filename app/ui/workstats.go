package ui

import (
	"runtime/metrics"
	"time"
)

// gcStats is the Go runtime's account of memory work so far: the CPU time
// of garbage collection, the collections, the bytes allocated and the heap
// live after the last collection. The runner reads it around each phase of
// an analysis and attaches the differences to its performance marks, so a
// script can split the page's time (wasm/page_timing_test.go).
type gcStats struct {
	gc     time.Duration
	cycles uint64
	alloc  uint64
	live   uint64
}

var gcSampleNames = [...]string{
	"/cpu/classes/gc/total:cpu-seconds",
	"/gc/cycles/total:gc-cycles",
	"/gc/heap/allocs:bytes",
	"/gc/heap/live:bytes",
}

// readGC reads the runtime's metrics (a few microseconds).
func readGC() gcStats {
	var s [len(gcSampleNames)]metrics.Sample
	for i, n := range gcSampleNames {
		s[i].Name = n
	}
	metrics.Read(s[:])
	var g gcStats
	if s[0].Value.Kind() == metrics.KindFloat64 {
		g.gc = time.Duration(s[0].Value.Float64() * float64(time.Second))
	}
	if s[1].Value.Kind() == metrics.KindUint64 {
		g.cycles = s[1].Value.Uint64()
	}
	if s[2].Value.Kind() == metrics.KindUint64 {
		g.alloc = s[2].Value.Uint64()
	}
	if s[3].Value.Kind() == metrics.KindUint64 {
		g.live = s[3].Value.Uint64()
	}
	return g
}

// detail returns the work between an earlier reading and g as a mark's
// detail: gc_ms, gc_cycles, alloc_mb and, as of g, live_mb.
func (g gcStats) detail(since gcStats) map[string]float64 {
	return map[string]float64{
		"gc_ms":     millis(g.gc - since.gc),
		"gc_cycles": float64(g.cycles - since.cycles),
		"alloc_mb":  float64(g.alloc-since.alloc) / (1 << 20),
		"live_mb":   float64(g.live) / (1 << 20),
	}
}

// millis is d in milliseconds.
func millis(d time.Duration) float64 { return float64(d) / float64(time.Millisecond) }
