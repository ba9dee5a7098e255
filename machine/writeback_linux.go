package machine

import (
	"os"

	"golang.org/x/sys/unix"
)

// startWriteback asks the kernel to start writing f's dirty pages now, so
// that the batch's sync pass mostly finds them written. A failure only
// loses the head start: the sync reports real errors.
func startWriteback(f *os.File) {
	_ = unix.SyncFileRange(int(f.Fd()), 0, 0, unix.SYNC_FILE_RANGE_WRITE)
}
