//go:build !unix

package ledger

import "os"

// Without flock(2) the lock is advisory only: every attempt succeeds, and
// the lock file still names the holder.
func flockTry(*os.File) (bool, error) { return true, nil }

func flockRelease(*os.File) {}
