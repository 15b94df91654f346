package engine

// GCPercent is the garbage collection target (GOGC, see
// runtime/debug.SetGCPercent) that bellcheck's programs run the engine
// under, the page and its worker as the command line, and that the
// engine's benchmarks measure it with: the heap may grow to five times
// what is live before a collection.
//
// An analysis holds little for long (a live heap of 2 to 4 MB, 20 MB for
// a 4-D rule's nodes) but allocates much that dies young: 1.3 MB for the
// 2-D benchmark, 5 MB for the 3-D, 39 MB for the 4-D. At the default
// (100) the 3-D benchmark saw a collection every 10 to 15 ms natively,
// each stopping the program for about 1.3 ms on a two-processor machine
// and slowing it while it marked: 28 ms an analysis against 23 at 400
// (medians, side by side in one run). In the page a collection is a
// stretch of its only thread.
const GCPercent = 400
