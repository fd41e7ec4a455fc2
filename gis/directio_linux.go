package gis

import (
	"os"

	"golang.org/x/sys/unix"
)

// setDirectIO turns O_DIRECT on or off for f and reports whether it is now
// on. File systems without direct I/O (tmpfs, for one) refuse it, and the
// file stays as it was.
func setDirectIO(f *os.File, on bool) bool {
	fd := int(f.Fd())
	fl, err := unix.FcntlInt(uintptr(fd), unix.F_GETFL, 0)
	if err != nil {
		return false
	}
	want := fl &^ unix.O_DIRECT
	if on {
		want |= unix.O_DIRECT
	}
	if _, err := unix.FcntlInt(uintptr(fd), unix.F_SETFL, want); err != nil {
		return fl&unix.O_DIRECT != 0
	}
	return on
}
