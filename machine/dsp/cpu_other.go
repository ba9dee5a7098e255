//go:build !amd64 || purego

package dsp

// Without amd64 assembly (another architecture, or the purego build tag)
// every vector kernel is off and the portable loops run.
const (
	HasAVX     = false
	HasAVX2    = false
	HasAVX2FMA = false
)
