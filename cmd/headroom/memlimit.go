package main

import (
	"runtime/debug"
	"runtime/metrics"
	"time"
)

// softMemoryLimit is the least soft memory limit a run gets: past it the
// garbage collector works harder rather than let the heap double (Go's
// default between collections). Measured on the 1M-segment demo town
// (README, Performance), whose live heap peaks near 2 GB while it writes:
// 2.4 GiB kept it at 2,651 MiB resident in 57 s; 3 GiB gave 3,352 MiB in
// 53 to 63 s (two other jobs were running), no limit 61 s and 5,838 MiB.
// The environment variable GOMEMLIMIT overrides it.
const softMemoryLimit = 2400 << 20 // bytes (2.4 GiB)

// gcPercent is the garbage collector's target (Go's GOGC; its default is
// 100): a collection once the heap has grown by three times the live heap
// of the last one, so the soft memory limit, not the target, sets the pace
// once the heap nears it, and the stages before that (reading, snapping,
// solving) collect less often. On the 1M-segment demo town (peak hour,
// every output; 2026-12-04) nine alternating pairs of runs took 22.3–24.8 s
// against 23.7–27.2 s with Go's default (eight of the nine faster, by 1.1 s
// on average, with 1.5–2 s less user CPU) and peaked at 2,458–2,471 MiB
// against 2,357–2,471. The environment variable GOGC overrides it.
const gcPercent = 300

// memoryLimitFor is the soft limit for a live heap of live bytes: at least
// base, and a quarter above the live heap, so that a network larger than
// the limit was chosen for gets room to collect in instead of a collector
// that runs without pause (Go caps it at half the CPU then).
func memoryLimitFor(live, base int64) int64 {
	return max(base, live+live/4)
}

// followMemoryLimit sets the soft memory limit to base and, every interval
// until stop is called, to memoryLimitFor the live heap of the last
// collection.
func followMemoryLimit(base int64, interval time.Duration) (stop func()) {
	debug.SetMemoryLimit(base)
	sample := []metrics.Sample{{Name: "/gc/heap/live:bytes"}}
	tick, done := time.NewTicker(interval), make(chan struct{})
	go func() {
		defer tick.Stop()
		for {
			select {
			case <-done:
				return
			case <-tick.C:
			}
			metrics.Read(sample)
			if sample[0].Value.Kind() == metrics.KindUint64 {
				debug.SetMemoryLimit(memoryLimitFor(int64(sample[0].Value.Uint64()), base))
			}
		}
	}()
	return func() { close(done) }
}
