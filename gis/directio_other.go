//go:build !linux

package gis

import "os"

// setDirectIO is a no-op off Linux: the file's bytes go through the page
// cache.
func setDirectIO(f *os.File, on bool) bool { return false }
