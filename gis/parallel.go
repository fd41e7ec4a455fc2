package gis

import (
	"runtime"
	"sync"
)

// minChunk is the fewest items worth a goroutine of their own.
const minChunk = 1024

// forChunks calls body on consecutive ranges [lo, hi) covering [0, n), one
// goroutine per range, with as many ranges as GOMAXPROCS (a single call
// when n is small). body must write only to its own range's results.
func forChunks(n int, body func(lo, hi int)) { forChunksOf(n, minChunk, body) }

// forChunksOf is forChunks with least items to a goroutine.
func forChunksOf(n, least int, body func(lo, hi int)) {
	workers := min(runtime.GOMAXPROCS(0), (n+least-1)/least)
	if workers <= 1 {
		body(0, n)
		return
	}
	var wg sync.WaitGroup
	for w := range workers {
		lo, hi := n*w/workers, n*(w+1)/workers
		wg.Go(func() { body(lo, hi) })
	}
	wg.Wait()
}
