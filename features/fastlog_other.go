//go:build !amd64 || purego

package features

// log10RowEps sets dst[i] = float32(log10Fast(src[i] + eps)).
func log10RowEps(dst []float32, src []float64, eps float64) {
	dst = dst[:len(src)]
	for i, v := range src {
		dst[i] = float32(log10Fast(v + eps))
	}
}
