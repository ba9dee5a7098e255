//go:build !amd64 || purego

package dsp

func pass4Vec(y, x []complex128, l, s int, w1, w2, w3 []complex128) bool { return false }

func pass8FirstVec(y []complex128, x []float64, w8 []complex128) bool { return false }

func postPowerVec(x []float64, z, w []complex128) bool { return false }

// mulInto sets dst[i] = a[i]·b[i]; the three slices have equal lengths.
func mulInto(dst, a, b []float64) { mulGo(dst, a, b) }
