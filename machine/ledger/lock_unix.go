//go:build unix

package ledger

import (
	"errors"
	"os"

	"golang.org/x/sys/unix"
)

// flockTry takes an exclusive flock(2) on f without blocking; false when
// another open file holds it. The kernel releases it when the holder's
// process dies, however it dies.
func flockTry(f *os.File) (bool, error) {
	for {
		err := unix.Flock(int(f.Fd()), unix.LOCK_EX|unix.LOCK_NB)
		switch {
		case err == nil:
			return true, nil
		case errors.Is(err, unix.EINTR):
			continue
		case errors.Is(err, unix.EWOULDBLOCK):
			return false, nil
		}
		return false, err
	}
}

func flockRelease(f *os.File) { unix.Flock(int(f.Fd()), unix.LOCK_UN) }
