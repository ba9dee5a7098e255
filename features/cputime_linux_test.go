//go:build linux

package features

import (
	"runtime"
	"syscall"
	"testing"
	"time"
)

// threadCPU returns the CPU time of the calling OS thread, so that a
// benchmark on a busy machine can report time on the core rather than
// wall time.
func threadCPU() time.Duration {
	var ru syscall.Rusage
	const rusageThread = 1 // RUSAGE_THREAD
	if err := syscall.Getrusage(rusageThread, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}

// BenchmarkLogMelCPU10s reports CPU ns per frame on one locked thread for
// a 10 s clip at 16 kHz with the default configuration.
func BenchmarkLogMelCPU10s(b *testing.B) {
	runtime.LockOSThread()
	defer runtime.UnlockOSThread()
	l, err := NewLogMel(Config{}, 16000)
	if err != nil {
		b.Fatal(err)
	}
	x := noise(160000, 1)
	dst, frames := l.Compute(nil, x)
	b.ResetTimer()
	c0 := threadCPU()
	for b.Loop() {
		dst, _ = l.Compute(dst, x)
	}
	cpu := threadCPU() - c0
	b.ReportMetric(float64(cpu.Nanoseconds())/float64(b.N*frames), "cpu-ns/frame")
	b.ReportMetric(float64(b.N*frames)/cpu.Seconds(), "frames/cpu-s")
}
