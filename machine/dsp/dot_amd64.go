//go:build amd64 && !purego

package dsp

//go:noescape
func dot4FMA(h, x *[4]*float64, n int, out *[4]float64)

//go:noescape
func dot4sFMA(h, x *float64, xstride, n int, out *[4]float64)

//go:noescape
func dot4s32AVX(h, x *float32, xstride, n int, out *[4]float64)

//go:noescape
func dot4pFMA(h, x *[4]*float64, n int, out *[4]float64)

// Dot4 sets out[k] = Σ_{i<n} h[k][i]·x[k][i]; n is a multiple of 8 and
// every pointer has n readable values. The assembly and the portable
// version add in the same order with fused multiply-adds, so results are
// bit-identical on every machine.
func Dot4(out *[4]float64, h, x *[4]*float64, n int) {
	if HasAVX2FMA {
		dot4FMA(h, x, n, out)
		return
	}
	dot4Lanes(h, x, n, out)
}

// Dot4s sets out[k] = Σ_{i<n} h[i]·x[k·xstride+i] for k = 0..3, with the
// same rounding as Dot4.
func Dot4s(out *[4]float64, h, x *float64, xstride, n int) {
	if HasAVX2FMA {
		dot4sFMA(h, x, xstride, n, out)
		return
	}
	dot4sLanes(h, x, xstride, n, out)
}

// Dot4p is Dot4 for x[1] == x[0] and x[3] == x[2], with the same rounding.
func Dot4p(out *[4]float64, h, x *[4]*float64, n int) {
	if HasAVX2FMA {
		dot4pFMA(h, x, n, out)
		return
	}
	dot4Lanes(h, x, n, out)
}

// Dot4s32 sets out[k] = Σ_{i<n} h[i]·x[k·xstride+i] for k = 0..3 in
// float32 arithmetic; n is a multiple of 16. Its kernel needs AVX only,
// but it runs under the same switch as the others, and the portable
// version rounds identically.
func Dot4s32(out *[4]float64, h, x *float32, xstride, n int) {
	if HasAVX2FMA {
		dot4s32AVX(h, x, xstride, n, out)
		return
	}
	dot4s32Lanes(h, x, xstride, n, out)
}
