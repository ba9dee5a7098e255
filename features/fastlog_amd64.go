//go:build amd64 && !purego

package features

import "thrum/machine/dsp"

//go:noescape
func log10RowAVX2(dst *float32, src *float64, n int, eps float64, tab *[2]float64) bool

// log10RowEps sets dst[i] = float32(log10Fast(src[i] + eps)), with vector
// instructions where available (bit-identical to the scalar loop).
func log10RowEps(dst []float32, src []float64, eps float64) {
	dst = dst[:len(src)]
	k := 0
	if dsp.HasAVX2 && len(src) >= 4 {
		k = len(src) &^ 3
		if !log10RowAVX2(&dst[0], &src[0], k, eps, &logTable[0]) {
			k = 0
		}
	}
	for i := k; i < len(src); i++ {
		dst[i] = float32(log10Fast(src[i] + eps))
	}
}
