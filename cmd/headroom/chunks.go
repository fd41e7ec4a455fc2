package main

import (
	"runtime"
	"sync"
)

// chunkLeast is the fewest pipes a goroutine of forPipeChunks takes: below
// some thousands the goroutines cost more than they save (common
// practice).
const chunkLeast = 16384

// forPipeChunks calls body on contiguous ranges that cover 0..n−1, one a
// core (GOMAXPROCS) when there are enough items to share out, else once on
// the whole range. body may write only to the items of its own range.
func forPipeChunks(n int, body func(lo, hi int)) {
	workers := min(runtime.GOMAXPROCS(0), (n+chunkLeast-1)/chunkLeast)
	if workers <= 1 {
		body(0, n)
		return
	}
	var wg sync.WaitGroup
	for w := range workers {
		wg.Go(func() { body(n*w/workers, n*(w+1)/workers) })
	}
	wg.Wait()
}
