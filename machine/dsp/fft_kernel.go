package dsp

import (
	"math"
	"unsafe"
)

// The complex kernel is a Stockham autosort FFT (decimation in frequency):
// each pass reads one buffer and writes the other, so no bit-reversal
// permutation is needed and every inner loop walks memory with unit stride.
// A pass with sub-transform length L and stride s = m/L computes, for
// p < L/4 and q < s (radix 4, w = e^{−2πi/L}, quarter = m/4):
//
//	a, b, c, d = x[q+s(p+k·L/4)], k = 0..3
//	y[q+s(4p+0)] = (a+c) + (b+d)
//	y[q+s(4p+1)] = ((a−c) − i(b−d))·w^p
//	y[q+s(4p+2)] = ((a+c) − (b+d))·w^{2p}
//	y[q+s(4p+3)] = ((a−c) + i(b−d))·w^{3p}
//
// When log2(m) is odd the first pass is radix 8 (eight inputs
// x[q+s(p+k·L/8)]); radix 2 only for m = 2. The last radix-4
// pass (L = 4) has unit twiddles and is specialised.

// pass is one Stockham pass of the complex plan.
type pass struct {
	l     int             // sub-transform length
	radix int             // 2, 4 or 8
	w     [7][]complex128 // w[k-1][p] = e^{−2πi·k·p/l}, k = 1 … radix−1, p < l/radix
	// w8 holds the radix-8 twiddles regrouped for the vector kernel:
	// w8[14j+2(k−1)+i] = w[k−1][2j+i], i = 0, 1 (nil unless radix 8 and
	// l/8 is even).
	w8 []complex128
}

// plan is the immutable part of a complex FFT of size m (a power of two).
// It is shared by every scratch-holding wrapper of the same size.
type plan struct {
	m      int
	passes []pass
}

// twiddle returns e^{−2πik/n}, computed directly (not by recurrence) and
// reduced to the first octant so that quadrant and octant points are exact
// or correctly symmetric.
func twiddle(k, n int) complex128 {
	k %= n
	if k < 0 {
		k += n
	}
	// 2πk/n = q·π/2 + (π/2)·r/n with 4k = q·n + r.
	q := (4 * k) / n
	r := 4*k - q*n
	var c, s float64
	switch {
	case r == 0:
		c, s = 1, 0
	case 2*r <= n:
		s, c = math.Sincos(math.Pi / 2 * float64(r) / float64(n))
	default:
		// sin and cos of π/2 − θ are cos θ and sin θ.
		c, s = math.Sincos(math.Pi / 2 * float64(n-r) / float64(n))
	}
	// Rotate (c, s) by q quarter turns.
	switch q & 3 {
	case 1:
		c, s = -s, c
	case 2:
		c, s = -c, -s
	case 3:
		c, s = s, -c
	}
	return complex(c, -s)
}

func newPass(l, radix int) pass {
	p := pass{l: l, radix: radix}
	h := l / radix
	for k := 1; k < radix; k++ {
		w := make([]complex128, h)
		for i := range w {
			w[i] = twiddle(k*i, l)
		}
		p.w[k-1] = w
	}
	if radix == 8 && h%2 == 0 {
		p.w8 = make([]complex128, 7*h)
		for j := 0; j < h/2; j++ {
			for k := 1; k < 8; k++ {
				p.w8[14*j+2*(k-1)] = p.w[k-1][2*j]
				p.w8[14*j+2*(k-1)+1] = p.w[k-1][2*j+1]
			}
		}
	}
	return p
}

// newPlan factors m as one radix-8 pass (when log2 m is odd) followed by
// radix-4 passes, the last of which (L = 4) needs no twiddles; radix 2 only
// for m = 2. (Further radix-8 passes measured no faster: the kernel is bound
// by scalar arithmetic, not by sweeps over memory, up to 2^17 points.)
func newPlan(m int) *plan {
	pl := &plan{m: m}
	log := 0
	for 1<<log < m {
		log++
	}
	l := m
	switch {
	case m == 2:
		pl.passes = append(pl.passes, newPass(2, 2))
		return pl
	case log%2 == 1:
		pl.passes = append(pl.passes, newPass(l, 8))
		l /= 8
	}
	for ; l >= 4; l /= 4 {
		pl.passes = append(pl.passes, newPass(l, 4))
	}
	return pl
}

// npass is the number of passes; the result of run lands in b0 when it is
// odd and in b1 when it is even (or in b0 for m = 1, which needs one copy).
func (pl *plan) npass() int { return len(pl.passes) }

// rest runs passes 1… after the first pass wrote into cur, ping-ponging
// between cur and other, and returns the buffer holding the result.
func (pl *plan) rest(cur, other []complex128) []complex128 {
	m := pl.m
	for i := 1; i < len(pl.passes); i++ {
		pl.passes[i].apply(other[:m], cur[:m], m)
		cur, other = other, cur
	}
	return cur[:m]
}

// apply runs one pass from x to y (both length m) for complex input.
func (p *pass) apply(y, x []complex128, m int) {
	s := m / p.l
	switch {
	case p.radix == 2:
		y[0], y[1] = x[0]+x[1], x[0]-x[1]
	case p.radix == 8 && p.l == 8:
		pass8Last(y, x)
	case p.radix == 8:
		pass8Flat(y, x, s, &p.w)
	case pass4Vec(y, x, p.l, s, p.w[0], p.w[1], p.w[2]):
	case p.l == 4:
		pass4Last(y, x)
	case s < 16:
		pass4Flat(y, x, s, p.w[0], p.w[1], p.w[2])
	default:
		pass4(y, x, s, p.w[0], p.w[1], p.w[2])
	}
}

// runConjReal transforms buf (destroying it, ping-ponging with other) and
// writes the conjugate of the result into dst as pairs (re, −im) of floats:
// the last step of a real inverse.
func (pl *plan) runConjReal(dst []float64, buf, other []complex128) {
	m := pl.m
	dst = dst[:2*m]
	np := len(pl.passes)
	if last := np - 1; last >= 1 && pl.passes[last].l == 4 {
		cur, oth := buf[:m], other[:m]
		for i := 0; i < last; i++ {
			pl.passes[i].apply(oth, cur, m)
			cur, oth = oth, cur
		}
		pass4LastConjReal(dst, cur)
		return
	}
	z := buf[:m]
	if np > 0 {
		z = pl.run(buf, other, buf)
	}
	for j, v := range z {
		dst[2*j] = real(v)
		dst[2*j+1] = -imag(v)
	}
}

// run transforms src (length m) and returns the buffer (b0 or b1) that holds
// the result. src is only read; it must not overlap b0, and may be b1 (the
// first pass consumes it before b1 is written).
func (pl *plan) run(src, b0, b1 []complex128) []complex128 {
	m := pl.m
	if len(pl.passes) == 0 {
		copy(b0[:m], src[:m])
		return b0[:m]
	}
	pl.passes[0].apply(b0[:m], src[:m], m)
	return pl.rest(b0, b1)
}

// runReal is run for a real sequence src of length 2m read as m complex
// values z[j] = src[2j] + i·src[2j+1].
func runReal[F float32 | float64](pl *plan, src []F, b0, b1 []complex128) []complex128 {
	m := pl.m
	src = src[:2*m]
	if len(pl.passes) == 0 {
		b0[0] = complex(float64(src[0]), float64(src[1]))
		return b0[:m]
	}
	p := &pl.passes[0]
	switch p.radix {
	case 2:
		a := complex(float64(src[0]), float64(src[1]))
		b := complex(float64(src[2]), float64(src[3]))
		b0[0], b0[1] = a+b, a-b
	case 4:
		pass4FirstReal(b0[:m], src, p.w[0], p.w[1], p.w[2])
	default:
		var zero F
		if unsafe.Sizeof(zero) != 8 || !pass8FirstVec(b0[:m], unsafe.Slice((*float64)(unsafe.Pointer(&src[0])), len(src)), p.w8) {
			pass8FirstReal(b0[:m], src, &p.w)
		}
	}
	return pl.rest(b0, b1)
}

func pass4FirstReal[F float32 | float64](y []complex128, x []F, w1, w2, w3 []complex128) {
	h := len(x) / 4 // floats per quarter
	x0 := x[:h]
	x1 := x[h : 2*h]
	x2 := x[2*h : 3*h]
	x3 := x[3*h : 4*h]
	x1 = x1[:len(x0)]
	x2 = x2[:len(x0)]
	x3 = x3[:len(x0)]
	y = y[:2*h]
	w1 = w1[:h/2]
	w2 = w2[:len(w1)]
	w3 = w3[:len(w1)]
	for p := range w1 {
		i := 2 * p
		a := complex(float64(x0[i]), float64(x0[i+1]))
		b := complex(float64(x1[i]), float64(x1[i+1]))
		c := complex(float64(x2[i]), float64(x2[i+1]))
		d := complex(float64(x3[i]), float64(x3[i+1]))
		apc, amc := a+c, a-c
		bpd, bmd := b+d, b-d
		jbmd := complex(-imag(bmd), real(bmd))
		o := (*[4]complex128)(y[4*p:])
		o[0] = apc + bpd
		o[1] = (amc - jbmd) * w1[p]
		o[2] = (apc - bpd) * w2[p]
		o[3] = (amc + jbmd) * w3[p]
	}
}

// pass4 is a middle radix-4 pass with stride s.
func pass4(y, x []complex128, s int, w1, w2, w3 []complex128) {
	quarter := len(x) / 4
	h := quarter / s
	w1 = w1[:h]
	w2 = w2[:h]
	w3 = w3[:h]
	// p = 0 has unit twiddles.
	bfly4Unit(y[:s], y[s:2*s], y[2*s:3*s], y[3*s:4*s],
		x[:s], x[quarter:quarter+s], x[2*quarter:2*quarter+s], x[3*quarter:3*quarter+s])
	for p := 1; p < len(w1); p++ {
		wa, wb, wc := w1[p], w2[p], w3[p]
		i := s * p
		x0 := x[i : i+s]
		x1 := x[i+quarter : i+quarter+s]
		x2 := x[i+2*quarter : i+2*quarter+s]
		x3 := x[i+3*quarter : i+3*quarter+s]
		o := 4 * i
		y0 := y[o : o+s]
		y1 := y[o+s : o+2*s]
		y2 := y[o+2*s : o+3*s]
		y3 := y[o+3*s : o+4*s]
		x1 = x1[:len(x0)]
		x2 = x2[:len(x0)]
		x3 = x3[:len(x0)]
		y0 = y0[:len(x0)]
		y1 = y1[:len(x0)]
		y2 = y2[:len(x0)]
		y3 = y3[:len(x0)]
		for q := range x0 {
			a, b, c, d := x0[q], x1[q], x2[q], x3[q]
			apc, amc := a+c, a-c
			bpd, bmd := b+d, b-d
			jbmd := complex(-imag(bmd), real(bmd))
			y0[q] = apc + bpd
			y1[q] = (amc - jbmd) * wa
			y2[q] = (apc - bpd) * wb
			y3[q] = (amc + jbmd) * wc
		}
	}
}

// pass4Last is the final radix-4 pass (L = 4, s = m/4): unit twiddles, and
// input and output share the same layout.
func pass4Last(y, x []complex128) {
	s := len(x) / 4
	bfly4Unit(y[:s], y[s:2*s], y[2*s:3*s], y[3*s:4*s], x[:s], x[s:2*s], x[2*s:3*s], x[3*s:4*s])
}

// bfly4Unit runs len(x0) radix-4 butterflies with unit twiddles.
func bfly4Unit(y0, y1, y2, y3, x0, x1, x2, x3 []complex128) {
	x1 = x1[:len(x0)]
	x2 = x2[:len(x0)]
	x3 = x3[:len(x0)]
	y0 = y0[:len(x0)]
	y1 = y1[:len(x0)]
	y2 = y2[:len(x0)]
	y3 = y3[:len(x0)]
	for q := range x0 {
		a, b, c, d := x0[q], x1[q], x2[q], x3[q]
		apc, amc := a+c, a-c
		bpd, bmd := b+d, b-d
		jbmd := complex(-imag(bmd), real(bmd))
		y0[q] = apc + bpd
		y1[q] = amc - jbmd
		y2[q] = apc - bpd
		y3[q] = amc + jbmd
	}
}

// pass4Flat is pass4 for small strides, where the per-p setup of pass4
// would dominate: one flat loop over the m/4 butterflies, whose inputs
// x[i + k·m/4] (i = s·p + q) are contiguous in i.
func pass4Flat(y, x []complex128, s int, w1, w2, w3 []complex128) {
	shift := 0
	for 1<<shift < s {
		shift++
	}
	mask := s - 1
	quarter := len(x) / 4
	x0 := x[:quarter]
	x1 := x[quarter : 2*quarter]
	x2 := x[2*quarter : 3*quarter]
	x3 := x[3*quarter : 4*quarter]
	x1 = x1[:len(x0)]
	x2 = x2[:len(x0)]
	x3 = x3[:len(x0)]
	y = y[:4*len(x0)]
	for i := range x0 {
		p := i >> shift
		q := i & mask
		a, b, c, d := x0[i], x1[i], x2[i], x3[i]
		apc, amc := a+c, a-c
		bpd, bmd := b+d, b-d
		jbmd := complex(-imag(bmd), real(bmd))
		o := 4*i - 3*q
		y[o] = apc + bpd
		y[o+s] = (amc - jbmd) * w1[p]
		y[o+2*s] = (apc - bpd) * w2[p]
		y[o+3*s] = (amc + jbmd) * w3[p]
	}
}

// radix-8 constant: √½.
const sqrtHalf = 0.70710678118654752440084436210484903928483593768847

// pass8Flat is a radix-8 pass with stride s from complex input:
//
//	y[q+s(8p+k)] = w^{pk}·Σ_j x[q+s(p+j·L/8)]·e^{−2πijk/8}.
func pass8Flat(y, x []complex128, s int, w *[7][]complex128) {
	shift := 0
	for 1<<shift < s {
		shift++
	}
	mask := s - 1
	e := len(x) / 8
	x0, x1, x2, x3 := x[:e], x[e:2*e], x[2*e:3*e], x[3*e:4*e]
	x4, x5, x6, x7 := x[4*e:5*e], x[5*e:6*e], x[6*e:7*e], x[7*e:8*e]
	x1, x2, x3 = x1[:len(x0)], x2[:len(x0)], x3[:len(x0)]
	x4, x5, x6, x7 = x4[:len(x0)], x5[:len(x0)], x6[:len(x0)], x7[:len(x0)]
	y = y[:8*len(x0)]
	w1, w2, w3, w4, w5, w6, w7 := w[0], w[1], w[2], w[3], w[4], w[5], w[6]
	for i := range x0 {
		p := i >> shift
		q := i & mask
		o := 8*i - 7*q
		a0, a1, a2, a3 := x0[i], x1[i], x2[i], x3[i]
		a4, a5, a6, a7 := x4[i], x5[i], x6[i], x7[i]
		// 4-point DFTs of the even and odd inputs.
		t0, t1 := a0+a4, a0-a4
		t2, t3 := a2+a6, a2-a6
		t3 = complex(imag(t3), -real(t3)) // −i·t3
		e0, e2 := t0+t2, t0-t2
		e1, e3 := t1+t3, t1-t3
		u0, u1 := a1+a5, a1-a5
		u2, u3 := a3+a7, a3-a7
		u3 = complex(imag(u3), -real(u3))
		o0, o2 := u0+u2, u0-u2
		o1, o3 := u1+u3, u1-u3
		// Multiply the odd outputs by e^{−2πik/8}.
		o1 = complex(sqrtHalf*(real(o1)+imag(o1)), sqrtHalf*(imag(o1)-real(o1)))
		o2 = complex(imag(o2), -real(o2))
		o3 = complex(sqrtHalf*(imag(o3)-real(o3)), -sqrtHalf*(real(o3)+imag(o3)))
		y[o] = e0 + o0
		y[o+s] = (e1 + o1) * w1[p]
		y[o+2*s] = (e2 + o2) * w2[p]
		y[o+3*s] = (e3 + o3) * w3[p]
		y[o+4*s] = (e0 - o0) * w4[p]
		y[o+5*s] = (e1 - o1) * w5[p]
		y[o+6*s] = (e2 - o2) * w6[p]
		y[o+7*s] = (e3 - o3) * w7[p]
	}
}

// pass8FirstReal is the first radix-8 pass (s = 1) reading a real sequence
// as complex pairs.
func pass8FirstReal[F float32 | float64](y []complex128, x []F, w *[7][]complex128) {
	e := len(x) / 8 // floats per eighth
	x0, x1, x2, x3 := x[:e], x[e:2*e], x[2*e:3*e], x[3*e:4*e]
	x4, x5, x6, x7 := x[4*e:5*e], x[5*e:6*e], x[6*e:7*e], x[7*e:8*e]
	x1, x2, x3 = x1[:len(x0)], x2[:len(x0)], x3[:len(x0)]
	x4, x5, x6, x7 = x4[:len(x0)], x5[:len(x0)], x6[:len(x0)], x7[:len(x0)]
	w1 := w[0][:e/2]
	w2, w3, w4, w5, w6, w7 := w[1][:len(w1)], w[2][:len(w1)], w[3][:len(w1)], w[4][:len(w1)], w[5][:len(w1)], w[6][:len(w1)]
	y = y[:4*e]
	for p := range w1 {
		i := 2 * p
		a0 := complex(float64(x0[i]), float64(x0[i+1]))
		a1 := complex(float64(x1[i]), float64(x1[i+1]))
		a2 := complex(float64(x2[i]), float64(x2[i+1]))
		a3 := complex(float64(x3[i]), float64(x3[i+1]))
		a4 := complex(float64(x4[i]), float64(x4[i+1]))
		a5 := complex(float64(x5[i]), float64(x5[i+1]))
		a6 := complex(float64(x6[i]), float64(x6[i+1]))
		a7 := complex(float64(x7[i]), float64(x7[i+1]))
		t0, t1 := a0+a4, a0-a4
		t2, t3 := a2+a6, a2-a6
		t3 = complex(imag(t3), -real(t3))
		e0, e2 := t0+t2, t0-t2
		e1, e3 := t1+t3, t1-t3
		u0, u1 := a1+a5, a1-a5
		u2, u3 := a3+a7, a3-a7
		u3 = complex(imag(u3), -real(u3))
		o0, o2 := u0+u2, u0-u2
		o1, o3 := u1+u3, u1-u3
		o1 = complex(sqrtHalf*(real(o1)+imag(o1)), sqrtHalf*(imag(o1)-real(o1)))
		o2 = complex(imag(o2), -real(o2))
		o3 = complex(sqrtHalf*(imag(o3)-real(o3)), -sqrtHalf*(real(o3)+imag(o3)))
		out := (*[8]complex128)(y[8*p:])
		out[0] = e0 + o0
		out[1] = (e1 + o1) * w1[p]
		out[2] = (e2 + o2) * w2[p]
		out[3] = (e3 + o3) * w3[p]
		out[4] = (e0 - o0) * w4[p]
		out[5] = (e1 - o1) * w5[p]
		out[6] = (e2 - o2) * w6[p]
		out[7] = (e3 - o3) * w7[p]
	}
}

// pass4LastConjReal is pass4Last writing the conjugated result as float
// pairs.
func pass4LastConjReal(y []float64, x []complex128) {
	s := len(x) / 4
	x0 := x[:s]
	x1 := x[s : 2*s]
	x2 := x[2*s : 3*s]
	x3 := x[3*s : 4*s]
	y0 := y[:2*s]
	y1 := y[2*s : 4*s]
	y2 := y[4*s : 6*s]
	y3 := y[6*s : 8*s]
	x1 = x1[:len(x0)]
	x2 = x2[:len(x0)]
	x3 = x3[:len(x0)]
	for q := range x0 {
		a, b, c, d := x0[q], x1[q], x2[q], x3[q]
		apc, amc := a+c, a-c
		bpd, bmd := b+d, b-d
		jbmd := complex(-imag(bmd), real(bmd))
		r0 := apc + bpd
		r1 := amc - jbmd
		r2 := apc - bpd
		r3 := amc + jbmd
		i := 2 * q
		y0[i], y0[i+1] = real(r0), -imag(r0)
		y1[i], y1[i+1] = real(r1), -imag(r1)
		y2[i], y2[i+1] = real(r2), -imag(r2)
		y3[i], y3[i+1] = real(r3), -imag(r3)
	}
}

// pass8Last is the final radix-8 pass (L = 8, s = m/8): unit twiddles, and
// input and output share the same layout.
func pass8Last(y, x []complex128) {
	s := len(x) / 8
	x0, x1, x2, x3 := x[:s], x[s:2*s], x[2*s:3*s], x[3*s:4*s]
	x4, x5, x6, x7 := x[4*s:5*s], x[5*s:6*s], x[6*s:7*s], x[7*s:8*s]
	y0, y1, y2, y3 := y[:s], y[s:2*s], y[2*s:3*s], y[3*s:4*s]
	y4, y5, y6, y7 := y[4*s:5*s], y[5*s:6*s], y[6*s:7*s], y[7*s:8*s]
	x1, x2, x3 = x1[:len(x0)], x2[:len(x0)], x3[:len(x0)]
	x4, x5, x6, x7 = x4[:len(x0)], x5[:len(x0)], x6[:len(x0)], x7[:len(x0)]
	y0, y1, y2, y3 = y0[:len(x0)], y1[:len(x0)], y2[:len(x0)], y3[:len(x0)]
	y4, y5, y6, y7 = y4[:len(x0)], y5[:len(x0)], y6[:len(x0)], y7[:len(x0)]
	for q := range x0 {
		a0, a1, a2, a3 := x0[q], x1[q], x2[q], x3[q]
		a4, a5, a6, a7 := x4[q], x5[q], x6[q], x7[q]
		t0, t1 := a0+a4, a0-a4
		t2, t3 := a2+a6, a2-a6
		t3 = complex(imag(t3), -real(t3))
		e0, e2 := t0+t2, t0-t2
		e1, e3 := t1+t3, t1-t3
		u0, u1 := a1+a5, a1-a5
		u2, u3 := a3+a7, a3-a7
		u3 = complex(imag(u3), -real(u3))
		o0, o2 := u0+u2, u0-u2
		o1, o3 := u1+u3, u1-u3
		o1 = complex(sqrtHalf*(real(o1)+imag(o1)), sqrtHalf*(imag(o1)-real(o1)))
		o2 = complex(imag(o2), -real(o2))
		o3 = complex(sqrtHalf*(imag(o3)-real(o3)), -sqrtHalf*(real(o3)+imag(o3)))
		y0[q] = e0 + o0
		y1[q] = e1 + o1
		y2[q] = e2 + o2
		y3[q] = e3 + o3
		y4[q] = e0 - o0
		y5[q] = e1 - o1
		y6[q] = e2 - o2
		y7[q] = e3 - o3
	}
}
