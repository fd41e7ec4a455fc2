//go:build !unix

package gis

import "time"

// processCPU is unknown here; benchmarks then report no CPU figures.
func processCPU() time.Duration { return 0 }
