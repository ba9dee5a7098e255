//go:build !amd64 || purego

package features

func (fb *Filterbank) applyVec(dst, spec []float64) bool { return false }
