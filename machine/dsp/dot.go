package dsp

import (
	"math"
	"unsafe"
)

// dot4Lanes is the portable form of Dot4. For each output it keeps eight
// lanes (two blocks of four), reduces them pairwise in a fixed order and
// uses fused multiply-adds, exactly as the AVX2 kernel does.
func dot4Lanes(h, x *[4]*float64, n int, out *[4]float64) {
	for k := 0; k < 4; k++ {
		hs := unsafe.Slice(h[k], n)
		xs := unsafe.Slice(x[k], n)
		var l [8]float64
		for i := 0; i+8 <= n; i += 8 {
			hh := hs[i : i+8 : i+8]
			xx := xs[i : i+8 : i+8]
			for j := range l {
				l[j] = math.FMA(hh[j], xx[j], l[j])
			}
		}
		y0, y1, y2, y3 := l[0]+l[4], l[1]+l[5], l[2]+l[6], l[3]+l[7]
		out[k] = (y0 + y2) + (y1 + y3)
	}
}

// dot4sLanes is dot4Lanes with one shared row h and four windows of x
// xstride apart.
func dot4sLanes(h, x *float64, xstride, n int, out *[4]float64) {
	xp := unsafe.Slice(x, 3*xstride+n)
	var hp, ws [4]*float64
	for k := range hp {
		hp[k], ws[k] = h, &xp[k*xstride]
	}
	dot4Lanes(&hp, &ws, n, out)
}

// dot4s32Lanes is the portable form of Dot4s32: float32 products and sums,
// each rounded on its own (the explicit conversions forbid fusing them),
// two blocks of eight lanes per output, then the eight lane sums added
// pairwise as ((0+1)+(2+3))+((4+5)+(6+7)), exactly as the AVX kernel's
// horizontal adds do.
func dot4s32Lanes(h, x *float32, xstride, n int, out *[4]float64) {
	hs := unsafe.Slice(h, n)
	xp := unsafe.Slice(x, 3*xstride+n)
	for k := 0; k < 4; k++ {
		xs := xp[k*xstride : k*xstride+n]
		var l [16]float32
		for i := 0; i+16 <= n; i += 16 {
			hh := hs[i : i+16 : i+16]
			xx := xs[i : i+16 : i+16]
			for j := range l {
				l[j] += float32(hh[j] * xx[j])
			}
		}
		var y [8]float32
		for j := range y {
			y[j] = l[j] + l[j+8]
		}
		h01, h23, h45, h67 := y[0]+y[1], y[2]+y[3], y[4]+y[5], y[6]+y[7]
		out[k] = float64((h01 + h23) + (h45 + h67))
	}
}
