//go:build amd64 && !purego

package features

import "golang.org/x/sys/cpu"

// melVec reports AVX with OS support for the YMM state; fixed at start-up.
var melVec = cpu.X86.HasAVX

//go:noescape
func melAVX(dst, spec, w *float64, tab *int32, nb int)

// applyVec computes bands 0 … nb−1 of the padded layout with vector
// instructions (bit-identical to applyLanes) and reports whether it did.
func (fb *Filterbank) applyVec(dst, spec []float64) bool {
	if !melVec || fb.nvec == 0 {
		return false
	}
	_, _ = dst[fb.nvec-1], spec[fb.Bins-1]
	melAVX(&dst[0], &spec[0], &fb.padded[0], &fb.tab[0], fb.nvec)
	return true
}
