//go:build unix

package online

import (
	"syscall"
	"time"
)

// processCPU returns the CPU time the process has used (user + system),
// so a benchmark on a busy machine can report time on the cores besides
// wall time.
func processCPU() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}
