package dsp

import "math"

// Block-wise conversion for long recordings: ApplyAt computes any run of
// output samples from the input window that holds their kernels, so a
// recording can be converted clip by clip without decoding it whole. For a
// given output index the arithmetic is that of the single-output path: the
// outputs do not depend on where a block starts.

// Fraction returns the plan's exact ratio p/q (input samples per output
// sample) and ok, or ok false for an interpolated plan.
func (rs *Resampler) Fraction() (p, q int, ok bool) {
	if rs.ratio == 1 {
		return 1, 1, true
	}
	return rs.p, rs.q, rs.q != 0
}

// Taps returns the kernel length in input samples (padded to the dot
// kernel's block): the reach of one output into its input.
func (rs *Resampler) Taps() int { return rs.taps }

// Half returns the kernel's half-length in input samples: an output reads
// that far on each side of its instant.
func (rs *Resampler) Half() int { return rs.off + 1 }

// Support returns the input samples [lo, hi) that outputs [m0, m0+n) read.
func (rs *Resampler) Support(m0 int64, n int) (lo, hi int64) {
	if rs.ratio == 1 {
		return m0, m0 + int64(n)
	}
	first, _, _ := rs.locateAt(m0)
	last, _, _ := rs.locateAt(m0 + int64(n) - 1)
	return first, last + int64(rs.taps) + 1
}

// ApplyAt fills dst with outputs m0, m0+1, … of the conversion of a signal
// s, given x = s[x0 : x0+len(x)]; samples of s outside x count as zero, so x
// should cover Support(m0, len(dst)) or reach the ends of s. Output m0+i
// is then bit-identical to Apply's output m0+i on the whole signal (the
// same kernels on the same taps; outputs before 0 or past Len are the
// kernel's tails, which Apply does not produce).
func (rs *Resampler) ApplyAt(dst, x []float64, x0, m0 int64) {
	if rs.ratio == 1 {
		for i := range dst {
			k := m0 + int64(i) - x0
			dst[i] = 0
			if k >= 0 && k < int64(len(x)) {
				dst[i] = x[k]
			}
		}
		return
	}
	taps := rs.taps
	if rs.q == 0 {
		for i := range dst {
			start, ph, a := rs.locateAt(m0 + int64(i))
			s := int(start - x0)
			if s < 0 || s+taps > len(x) {
				v := dotEdge(rs.table[ph*taps:(ph+1)*taps], x, s)
				dst[i] = v + a*(dotEdge(rs.table[(ph+1)*taps:(ph+2)*taps], x, s)-v)
				continue
			}
			// As in one: the same kernel as the grouped path.
			var out [4]float64
			h0, h1 := &rs.table[ph*taps], &rs.table[(ph+1)*taps]
			h := [4]*float64{h0, h1, h0, h1}
			xs := [4]*float64{&x[s], &x[s], &x[s], &x[s]}
			Dot4(&out, &h, &xs, taps)
			dst[i] = out[0] + a*(out[1]-out[0])
		}
		return
	}
	x32 := rs.scratch(len(x))
	defer rs.release(x32)
	for i, v := range x {
		x32[i] = float32(v)
	}
	q, n := rs.q, len(dst)
	var out [4]float64
	// Outputs m, m+q, m+2q, m+3q share a table row and read windows p
	// samples apart: one kernel call computes the four.
	for base := 0; base < n; base += 4 * q {
		if base+4*q > n {
			for i := base; i < n; i++ {
				dst[i] = rs.oneAt(x, x32, x0, m0+int64(i))
			}
			continue
		}
		for j := 0; j < q; j++ {
			m := m0 + int64(base+j)
			start, _, _ := rs.locateAt(m)
			s := int(start - x0)
			if s < 0 || s+3*rs.p+taps > len(x) {
				for k := 0; k < 4; k++ {
					dst[base+j+k*q] = rs.oneAt(x, x32, x0, m+int64(k*q))
				}
				continue
			}
			row := int(mod(m, int64(q)))
			Dot4s32(&out, &rs.table32[row*taps], &x32[s], rs.p, taps)
			dst[base+j], dst[base+j+q], dst[base+j+2*q], dst[base+j+3*q] = out[0], out[1], out[2], out[3]
		}
	}
}

// oneAt is output m of an exact-phase plan, x32 the float32 copy of x.
func (rs *Resampler) oneAt(x []float64, x32 []float32, x0, m int64) float64 {
	taps := rs.taps
	start, _, _ := rs.locateAt(m)
	s := int(start - x0)
	row := int(mod(m, int64(rs.q)))
	if s < 0 || s+taps > len(x) {
		return dotEdge(rs.table[row*taps:(row+1)*taps], x, s)
	}
	var out [4]float64
	Dot4s32(&out, &rs.table32[row*taps], &x32[s], 0, taps)
	return out[0]
}

// locateAt is locate for any output index, negative ones included.
func (rs *Resampler) locateAt(m int64) (start int64, ph int, a float64) {
	if rs.q != 0 {
		num := m * int64(rs.p)
		return floorDiv(num, int64(rs.q)) - int64(rs.off), int(mod(num, int64(rs.q))), 0
	}
	t := float64(m) * rs.ratio
	fi := math.Floor(t)
	u := (t - fi) * interPhases
	fu := math.Floor(u)
	return int64(fi) - int64(rs.off), int(fu), u - fu
}

func floorDiv(a, b int64) int64 {
	d := a / b
	if a%b != 0 && (a < 0) != (b < 0) {
		d--
	}
	return d
}

func mod(a, b int64) int64 {
	r := a % b
	if r < 0 {
		r += b
	}
	return r
}

// LowPass is a linear-phase Kaiser-windowed sinc low-pass filter: flat to
// the passband edge, at least 80 dB down from the stopband edge (the
// resampler's design rule). It is read-only after construction.
type LowPass struct {
	h    []float64 // 2·Half+1 symmetric taps
	half int
}

// NewLowPass designs the filter for passband edge pass and stopband edge
// stop, both in cycles per sample with 0 < pass < stop ≤ 0.5.
func NewLowPass(pass, stop float64) *LowPass {
	fc := (pass + stop) / 2
	dw := 2 * math.Pi * (stop - pass)
	beta := KaiserBeta(designDB)
	m := (designDB - 8) / (2.285 * dw)
	half := int(math.Ceil(m / 2))
	lp := &LowPass{h: make([]float64, 2*half+1), half: half}
	i0b := besselI0(beta)
	w := float64(half) + 1 // window half-width: the end taps stay nonzero
	for i := range lp.h {
		lp.h[i] = kaiserSinc(float64(i-half), fc, w, beta, i0b)
	}
	return lp
}

// Half returns the filter's half-length: output i reads x[i-Half … i+Half].
func (lp *LowPass) Half() int { return lp.half }

// ApplyValid filters x into dst, len(dst) = len(x) − 2·Half: dst[i] is the
// output centred on x[i+Half] (zero delay). It panics if x is too short.
func (lp *LowPass) ApplyValid(dst, x []float64) {
	n := len(x) - 2*lp.half
	if n < 0 || len(dst) < n {
		panic("dsp: LowPass.ApplyValid: x shorter than the filter or dst too short")
	}
	for i := 0; i < n; i++ {
		var s float64
		for j, c := range lp.h {
			s = math.FMA(c, x[i+j], s)
		}
		dst[i] = s
	}
}
