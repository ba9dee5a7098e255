//go:build unix

package machine

import "golang.org/x/sys/unix"

// umaskKeeps0644 reports whether the process's umask leaves mode 0644
// whole, so that a temporary file created 0644 needs no chmod. It is read
// once at start, before any goroutine creates files (umask has no read-only
// call: it is set and set back).
var umaskKeeps0644 = func() bool {
	old := unix.Umask(0o022)
	unix.Umask(old)
	return old&0o644 == 0
}()
