package gis

import (
	"runtime"
	"slices"
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

// mapFeatures maps features 0..n-1 on GOMAXPROCS goroutines with mapOne,
// which appends feature i's problems to *probs and returns its id and the
// member the id came from (id "" for none), and then lists the problems as
// one reader taking the features in order would: before, then feature by
// feature a problem for an id an earlier feature has (made by repeated,
// with the 1-based number of that first feature) ahead of the feature's
// own problems. mapOne must write only feature i's results.
func mapFeatures(n int, before []Problem, mapOne func(i int, probs *[]Problem) (id, field string),
	repeated func(i int, id, field string, first int) Problem) []Problem {
	first := make([]int, n) // feature i's problems start at first[i] in its chunk's
	ids := make([][2]string, n)
	type chunk struct {
		lo, hi int
		probs  []Problem
	}
	var chunks []chunk
	var mu sync.Mutex
	forChunks(n, func(lo, hi int) {
		var probs []Problem
		for i := lo; i < hi; i++ {
			first[i] = len(probs)
			ids[i][0], ids[i][1] = mapOne(i, &probs)
		}
		mu.Lock()
		chunks = append(chunks, chunk{lo, hi, probs})
		mu.Unlock()
	})
	slices.SortFunc(chunks, func(a, b chunk) int { return a.lo - b.lo })
	probs := before
	seen := make(map[string]int, n)
	for _, c := range chunks {
		for i := c.lo; i < c.hi; i++ {
			end := len(c.probs)
			if i+1 < c.hi {
				end = first[i+1]
			}
			if id := ids[i][0]; id != "" {
				if at, dup := seen[id]; dup {
					probs = append(probs, repeated(i, id, ids[i][1], at))
				} else {
					seen[id] = i + 1
				}
			}
			probs = append(probs, c.probs[first[i]:end]...)
		}
	}
	return probs
}
