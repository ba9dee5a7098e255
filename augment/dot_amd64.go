//go:build !purego

package augment

//go:noescape
func dot4FMA(h, x *[4]*float64, n int, out *[4]float64)

//go:noescape
func dot4sFMA(h, x *float64, xstride, n int, out *[4]float64)

//go:noescape
func dot4s32AVX(h, x *float32, xstride, n int, out *[4]float64)

//go:noescape
func dot4pFMA(h, x *[4]*float64, n int, out *[4]float64)

func cpuid(eax, ecx uint32) (a, b, c, d uint32)

func xgetbv0() uint32

// haveFMA reports AVX2 and FMA with OS support for the YMM state. It is
// computed once at start-up and never changes.
var haveFMA = func() bool {
	maxID, _, _, _ := cpuid(0, 0)
	if maxID < 7 {
		return false
	}
	_, _, c1, _ := cpuid(1, 0)
	const fma, osxsave, avx = 1 << 12, 1 << 27, 1 << 28
	if c1&fma == 0 || c1&osxsave == 0 || c1&avx == 0 {
		return false
	}
	if xgetbv0()&6 != 6 { // XMM and YMM state enabled by the OS
		return false
	}
	_, b7, _, _ := cpuid(7, 0)
	return b7&(1<<5) != 0 // AVX2
}()

// dot4 sets out[k] = Σ_{i<n} h[k][i]·x[k][i]; n is a multiple of 8 and
// every pointer has n readable values. The assembly and the portable
// version add in the same order with fused multiply-adds, so results are
// bit-identical on every machine.
func dot4(h, x *[4]*float64, n int, out *[4]float64) {
	if haveFMA {
		dot4FMA(h, x, n, out)
		return
	}
	dot4Lanes(h, x, n, out)
}

// dot4s sets out[k] = Σ_{i<n} h[i]·x[k·xstride+i] for k = 0..3, with the
// same rounding as dot4.
func dot4s(h, x *float64, xstride, n int, out *[4]float64) {
	if haveFMA {
		dot4sFMA(h, x, xstride, n, out)
		return
	}
	dot4sLanes(h, x, xstride, n, out)
}

// dot4p is dot4 for x[1] == x[0] and x[3] == x[2], with the same rounding.
func dot4p(h, x *[4]*float64, n int, out *[4]float64) {
	if haveFMA {
		dot4pFMA(h, x, n, out)
		return
	}
	dot4Lanes(h, x, n, out)
}

// dot4s32 sets out[k] = Σ_{i<n} h[i]·x[k·xstride+i] for k = 0..3 in
// float32 arithmetic; n is a multiple of 16. It needs AVX only, and the
// portable version rounds identically.
func dot4s32(h, x *float32, xstride, n int, out *[4]float64) {
	if haveFMA {
		dot4s32AVX(h, x, xstride, n, out)
		return
	}
	dot4s32Lanes(h, x, xstride, n, out)
}
