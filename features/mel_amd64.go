//go:build amd64 && !purego

package features

import "thrum/machine/dsp"

//go:noescape
func melAVX(dst, spec, w *float64, tab *int32, nb int)

// applyVec computes bands 0 … nb−1 of the padded layout with vector
// instructions (bit-identical to applyLanes) and reports whether it did.
func (fb *Filterbank) applyVec(dst, spec []float64) bool {
	if !dsp.HasAVX || fb.nvec == 0 {
		return false
	}
	_, _ = dst[fb.nvec-1], spec[fb.Bins-1]
	melAVX(&dst[0], &spec[0], &fb.padded[0], &fb.tab[0], fb.nvec)
	return true
}
