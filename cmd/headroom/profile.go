package main

import (
	"fmt"
	"io"
	"os"
	"runtime"
	"runtime/pprof"
)

// startProfiles is the developers' hook for profiling a whole run
// (DEVELOPERS.md): HEADROOM_CPUPROFILE=FILE writes a CPU profile of the
// command and HEADROOM_MEMPROFILE=FILE a heap profile at its end, for
// `go tool pprof`. The returned function stops and writes them.
func startProfiles(stderr io.Writer) func() {
	cpuPath, memPath := os.Getenv("HEADROOM_CPUPROFILE"), os.Getenv("HEADROOM_MEMPROFILE")
	var cpu *os.File
	if cpuPath != "" {
		f, err := os.Create(cpuPath)
		if err == nil {
			err = pprof.StartCPUProfile(f)
		}
		if err != nil {
			fmt.Fprintf(stderr, "headroom: HEADROOM_CPUPROFILE %s: %v\n", cpuPath, err)
		} else {
			cpu = f
		}
	}
	return func() {
		if cpu != nil {
			pprof.StopCPUProfile()
			cpu.Close()
		}
		if memPath == "" {
			return
		}
		f, err := os.Create(memPath)
		if err == nil {
			runtime.GC()
			err = pprof.WriteHeapProfile(f)
			f.Close()
		}
		if err != nil {
			fmt.Fprintf(stderr, "headroom: HEADROOM_MEMPROFILE %s: %v\n", memPath, err)
		}
	}
}
