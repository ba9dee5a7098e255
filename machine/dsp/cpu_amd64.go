//go:build amd64 && !purego

package dsp

import "golang.org/x/sys/cpu"

// CPU features the vector kernels of the module use, each with OS support
// for the YMM state. They are detected once at start-up and must be treated
// as read-only; this file is the only place the module asks the CPU.
var (
	// HasAVX reports AVX.
	HasAVX = cpu.X86.HasAVX
	// HasAVX2 reports AVX and AVX2.
	HasAVX2 = cpu.X86.HasAVX && cpu.X86.HasAVX2
	// HasAVX2FMA reports AVX, AVX2 and fused multiply-add (FMA3).
	HasAVX2FMA = cpu.X86.HasAVX && cpu.X86.HasAVX2 && cpu.X86.HasFMA
)
