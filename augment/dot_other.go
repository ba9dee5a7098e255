//go:build !amd64 || purego

package augment

// dot4 sets out[k] = Σ_{i<n} h[k][i]·x[k][i]; n is a multiple of 8.
func dot4(h, x *[4]*float64, n int, out *[4]float64) { dot4Lanes(h, x, n, out) }

// dot4s sets out[k] = Σ_{i<n} h[i]·x[k·xstride+i] for k = 0..3.
func dot4s(h, x *float64, xstride, n int, out *[4]float64) { dot4sLanes(h, x, xstride, n, out) }

// dot4p is dot4 for x[1] == x[0] and x[3] == x[2].
func dot4p(h, x *[4]*float64, n int, out *[4]float64) { dot4Lanes(h, x, n, out) }

// dot4s32 is dot4s in float32 arithmetic; n is a multiple of 16.
func dot4s32(h, x *float32, xstride, n int, out *[4]float64) {
	dot4s32Lanes(h, x, xstride, n, out)
}
