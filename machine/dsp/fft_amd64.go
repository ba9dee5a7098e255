//go:build amd64 && !purego

package dsp

// pass4AVX runs the radix-4 butterflies of p = 0 … h−1, q = 0 … s−1 (s even)
// with the layout of pass4; unit twiddles when w1 is nil. It performs the
// same IEEE operations in the same order as the Go loops (no fused
// multiply-add), so the results are bit-identical.
//
//go:noescape
func pass4AVX(y, x *complex128, quarter, s, h int, w1, w2, w3 *complex128)

// pass4Vec runs a radix-4 pass of sub-transform length l and stride s ≥ 2
// with vector instructions, with the same twiddle rule as the Go kernels
// (pass4Last: none; pass4Flat, s < 16: every p; pass4: all but p = 0), and
// reports whether it did.
func pass4Vec(y, x []complex128, l, s int, w1, w2, w3 []complex128) bool {
	if !HasAVX || s < 2 {
		return false
	}
	quarter := len(x) / 4
	h := quarter / s
	_ = y[len(x)-1]
	switch {
	case l == 4:
		pass4AVX(&y[0], &x[0], quarter, s, 1, nil, nil, nil)
	case s < 16:
		_, _, _ = w1[h-1], w2[h-1], w3[h-1]
		pass4AVX(&y[0], &x[0], quarter, s, h, &w1[0], &w2[0], &w3[0])
	default:
		_, _, _ = w1[h-1], w2[h-1], w3[h-1]
		pass4AVX(&y[0], &x[0], quarter, s, 1, nil, nil, nil)
		if h > 1 {
			pass4AVX(&y[4*s], &x[s], quarter, s, h-1, &w1[1], &w2[1], &w3[1])
		}
	}
	return true
}

//go:noescape
func pass8FirstRealAVX(y *complex128, x *float64, e, n int, tw *complex128)

// pass8FirstVec is pass8FirstReal for float64 input with vector
// instructions (bit-identical); it reports whether it ran. It needs the
// regrouped twiddles w8 (l/8 even).
func pass8FirstVec(y []complex128, x []float64, w8 []complex128) bool {
	e := len(x) / 8
	if !HasAVX || w8 == nil || e%4 != 0 || len(w8) != 7*e/2 {
		return false
	}
	_ = y[4*e-1]
	pass8FirstRealAVX(&y[0], &x[0], e, e/4, &w8[0])
	return true
}

//go:noescape
func postPowerAVX2(x *float64, z *complex128, m int, w *complex128)

// postPowerVec runs bins 1 … m/2 of postPower with vector instructions
// (bit-identical) and reports whether it did.
func postPowerVec(x []float64, z, w []complex128) bool {
	m := len(z)
	if !HasAVX2 || m < 4 || m%4 != 0 {
		return false
	}
	_, _ = x[m], w[m/2]
	postPowerAVX2(&x[0], &z[0], m, &w[0])
	return true
}

//go:noescape
func mulAVX(dst, a, b *float64, n int)

// mulInto sets dst[i] = a[i]·b[i]; the three slices have equal lengths.
func mulInto(dst, a, b []float64) {
	n := len(dst)
	if HasAVX && n >= 8 {
		k := n &^ 7
		_, _ = a[n-1], b[n-1]
		mulAVX(&dst[0], &a[0], &b[0], k)
		mulGo(dst[k:], a[k:n], b[k:n])
		return
	}
	mulGo(dst, a, b)
}
