//go:build !amd64 || purego

package dsp

// Dot4 sets out[k] = Σ_{i<n} h[k][i]·x[k][i]; n is a multiple of 8.
func Dot4(out *[4]float64, h, x *[4]*float64, n int) { dot4Lanes(h, x, n, out) }

// Dot4s sets out[k] = Σ_{i<n} h[i]·x[k·xstride+i] for k = 0..3.
func Dot4s(out *[4]float64, h, x *float64, xstride, n int) { dot4sLanes(h, x, xstride, n, out) }

// Dot4p is Dot4 for x[1] == x[0] and x[3] == x[2].
func Dot4p(out *[4]float64, h, x *[4]*float64, n int) { dot4Lanes(h, x, n, out) }

// Dot4s32 is Dot4s in float32 arithmetic; n is a multiple of 16.
func Dot4s32(out *[4]float64, h, x *float32, xstride, n int) {
	dot4s32Lanes(h, x, xstride, n, out)
}
