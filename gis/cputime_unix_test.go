//go:build unix

package gis

import (
	"syscall"
	"time"
)

// processCPU returns the CPU time (user and system) the process has used,
// from getrusage(2); benchmarks report it because the wall time on a
// shared machine depends on what else runs.
func processCPU() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}
