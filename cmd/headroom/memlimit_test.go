package main

import (
	"runtime/debug"
	"testing"
	"time"
)

// TestMemoryLimitFollowsTheLiveHeap: the limit is the base until the live
// heap comes within a quarter of it, then a quarter above the live heap;
// and followMemoryLimit applies it (debug.SetMemoryLimit(-1) reads it back).
func TestMemoryLimitFollowsTheLiveHeap(t *testing.T) {
	const base = 2400 << 20
	for _, c := range []struct{ live, want int64 }{
		{0, base}, {1 << 30, base}, {base * 4 / 5, base}, {2 << 30, 2<<30 + 512<<20}, {4 << 30, 5 << 30},
	} {
		if got := memoryLimitFor(c.live, base); got != c.want {
			t.Errorf("live %d: limit %d, want %d", c.live, got, c.want)
		}
	}
	prev := debug.SetMemoryLimit(-1)
	defer debug.SetMemoryLimit(prev)
	stop := followMemoryLimit(1<<40, time.Millisecond) // far above any test's heap: the base holds
	time.Sleep(20 * time.Millisecond)                  // some ticks
	stop()
	if got := debug.SetMemoryLimit(-1); got != 1<<40 {
		t.Fatalf("limit %d after followMemoryLimit, want %d", got, int64(1<<40))
	}
}
