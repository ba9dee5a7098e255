package dsp

import (
	"fmt"
	"math"
	"sync"
)

// Stopband attenuation, transition band and table size of the speed-change
// resampler. The passband ends at 0.9 of the lower Nyquist frequency and the
// stopband starts at that Nyquist frequency, so a tone that would alias is
// attenuated by at least 80 dB. The Kaiser formulas are evaluated for
// designDB, a few dB beyond the guarantee: at the band edge the windowed
// sinc falls a little short of the formula's estimate, and the padded
// table has room for the longer kernel at no extra cost.
const (
	designDB    = 86.0
	passEdge    = 0.9 // passband edge, fraction of the lower Nyquist frequency
	interPhases = 256 // table phases for ratios that are not a small fraction
	maxDenom    = 1000
	maxPlans    = 64
)

// Plans caches resampler plans by ratio. It is safe for concurrent use;
// the zero value is ready. It holds at most maxPlans plans (an exact-phase
// plan for r = 1.03 takes 90 kB, an interpolated one about 230 kB) and
// drops an arbitrary one when full, which costs only a rebuild: quantised
// speed draws (a recipe Increment) keep the set small.
type Plans struct {
	mu sync.Mutex
	m  map[float64]*Resampler
}

// Resampler returns the cached plan for ratio r, building it on first use.
func (p *Plans) Resampler(r float64) *Resampler {
	p.mu.Lock()
	defer p.mu.Unlock()
	if rs, ok := p.m[r]; ok {
		return rs
	}
	if p.m == nil {
		p.m = make(map[float64]*Resampler)
	}
	if len(p.m) >= maxPlans {
		for k := range p.m {
			delete(p.m, k)
			break
		}
	}
	rs := NewResampler(r)
	p.m[r] = rs
	return rs
}

// Resampler is a polyphase Kaiser-windowed sinc plan for one speed ratio.
// It is read-only after construction, so one plan may be shared by several
// goroutines.
type Resampler struct {
	ratio float64
	// Rational ratios p/q with q ≤ maxDenom use exact phases: output sample
	// m sits at input position m·p/q, phase (m·p mod q).
	p, q int
	// taps per phase, and offset: the first tap of output at input
	// position i0+φ reads x[i0-off].
	taps, off int
	// table holds phases rows of taps coefficients, row-major. For the
	// interpolated (irrational) case it has interPhases+1 rows, row φ for
	// phase φ; for exact phases row r holds phase (r·p) mod q.
	table  []float64
	phases int
	// table32 is table in float32, for the exact-phase kernel, which works
	// in float32: its rounding errors sit near −140 dB re the signal, far
	// below the 80 dB stopband and a 16-bit step (and a 24-bit step at
	// usual levels), and the kernel runs about 1.5 times as fast.
	table32 []float32

	// free holds float32 copies of inputs for reuse by later calls.
	mu   sync.Mutex
	free [][]float32
}

// NewResampler builds the plan for speed ratio r (output length
// round(n/r)). It panics if r is not positive and finite.
func NewResampler(r float64) *Resampler {
	if !(r > 0) || math.IsInf(r, 0) {
		panic(fmt.Sprintf("dsp: resampling ratio %v is not positive and finite", r))
	}
	rs := &Resampler{ratio: r}
	// The lower of the two rates, as a fraction of the input rate.
	scale := math.Min(1, 1/r)
	// Cutoff midway through the transition band [passEdge, 1]·Nyquist, in
	// cycles per input sample.
	fc := 0.5 * scale * (1 + passEdge) / 2
	// Transition width in radians per input sample.
	dw := math.Pi * scale * (1 - passEdge)
	beta := KaiserBeta(designDB)
	// Oppenheim & Schafer Eq. (7.63): M = (A − 8)/(2.285·Δω).
	m := (designDB - 8) / (2.285 * dw)
	half := m / 2 // kernel half-width in input samples
	rs.off = int(math.Ceil(half)) - 1
	// Rows are padded with zeros to a multiple of 16 taps, the block size
	// of the dot-product kernel.
	rs.taps = (2*(rs.off+1) + 15) &^ 15

	if p, q, ok := rational(r, maxDenom); ok {
		rs.p, rs.q = p, q
		rs.phases = q
	} else {
		rs.phases = interPhases
	}
	rows := rs.phases
	if rs.q == 0 {
		rows++
	}
	rs.table = make([]float64, rows*rs.taps)
	i0b := besselI0(beta)
	// The kernel is even and every table entry sits at a multiple of
	// 1/phases from the output instant, so each value is computed once.
	P := rs.phases
	kern := make([]float64, int(math.Ceil(half*float64(P)))+1)
	for i := range kern {
		kern[i] = kaiserSinc(float64(i)/float64(P), fc, half, beta, i0b)
	}
	for r := 0; r < rows; r++ {
		row := rs.table[r*rs.taps : (r+1)*rs.taps]
		ph := r
		if rs.q != 0 {
			// Rows in the order applyRational visits them: row r is the
			// phase of output r, (r·p) mod q, so the table streams.
			ph = r * rs.p % rs.q
		}
		for j := range row {
			// Distance from the output instant to input sample i0-off+j,
			// in table steps: ph/P + off − j.
			i := ph + (rs.off-j)*P
			if i < 0 {
				i = -i
			}
			if i < len(kern) {
				row[j] = kern[i]
			}
		}
	}
	if rs.q != 0 {
		rs.table32 = make([]float32, len(rs.table))
		for i, v := range rs.table {
			rs.table32[i] = float32(v)
		}
	}
	return rs
}

// Ratio returns the plan's speed ratio.
func (rs *Resampler) Ratio() float64 { return rs.ratio }

// Len returns the output length for an input of n samples: round(n/r).
func (rs *Resampler) Len(n int) int {
	if rs.q != 0 {
		// Exact integer rounding of n·q/p.
		return (2*n*rs.q + rs.p) / (2 * rs.p)
	}
	return int(math.Round(float64(n) / rs.ratio))
}

// Apply resamples x into dst (nil or short dst allocates) and returns
// dst[:Len(len(x))]. Ratio 1 copies x unchanged. Samples outside x are taken as zero. dst may not
// alias x. Apply does not allocate when dst is large enough.
func (rs *Resampler) Apply(dst, x []float64) []float64 {
	n := rs.Len(len(x))
	if cap(dst) < n {
		dst = make([]float64, n)
	}
	dst = dst[:n]
	if rs.ratio == 1 {
		copy(dst, x)
		return dst
	}
	if rs.q != 0 {
		rs.applyRational(dst, x)
		return dst
	}
	rs.applyInterpolated(dst, x)
	return dst
}

// applyInterpolated fills dst for an interpolated-table plan: each output
// is v0 + a·(v1 − v0), the dot products with the two neighbouring phases,
// and one kernel call serves two outputs.
func (rs *Resampler) applyInterpolated(dst, x []float64) {
	var h, xp [4]*float64
	var out [4]float64
	taps := rs.taps
	n := len(dst)
	for m := 0; m < n; {
		cnt := 0
		var frac [2]float64
		for cnt < 2 && m+cnt < n {
			start, ph, a := rs.locate(m + cnt)
			if start < 0 || start+taps > len(x) {
				break
			}
			k := 2 * cnt
			h[k], h[k+1] = &rs.table[ph*taps], &rs.table[(ph+1)*taps]
			xp[k], xp[k+1] = &x[start], &x[start]
			frac[cnt] = a
			cnt++
		}
		if cnt == 0 {
			// Part of the kernel falls outside x.
			dst[m] = rs.one(x, m)
			m++
			continue
		}
		if cnt == 1 {
			h[2], h[3], xp[2], xp[3] = h[0], h[1], xp[0], xp[1]
		}
		Dot4p(&out, &h, &xp, taps)
		for j := 0; j < cnt; j++ {
			v0, v1 := out[2*j], out[2*j+1]
			dst[m+j] = v0 + frac[j]*(v1-v0)
		}
		m += cnt
	}
}

// applyRational fills dst for an exact-phase plan. Outputs m, m+q, m+2q
// and m+3q share a table row and read windows p samples apart, so one
// kernel call computes all four, in float32 from a float32 copy of x.
func (rs *Resampler) applyRational(dst, x []float64) {
	n, taps, q := len(dst), rs.taps, rs.q
	x32 := rs.scratch(len(x))
	defer rs.release(x32)
	for i, v := range x {
		x32[i] = float32(v)
	}
	var out [4]float64
	for base := 0; base < n; base += 4 * q {
		s0, _, _ := rs.locate(base)
		s1, _, _ := rs.locate(base + 4*q - 1)
		if base+4*q > n || s0 < 0 || s1+taps > len(x) {
			for m := base; m < n && m < base+4*q; m++ {
				dst[m] = rs.oneRational(x, x32, m)
			}
			continue
		}
		// Step the read position and phase without dividing: each output
		// advances the input position by p/q = dp + dq/q.
		dp, dq := rs.p/q, rs.p%q
		start, ph := s0, 0
		d := dst[base : base+4*q]
		for j := 0; j < q; j++ {
			Dot4s32(&out, &rs.table32[j*taps], &x32[start], rs.p, taps)
			d[j], d[j+q], d[j+2*q], d[j+3*q] = out[0], out[1], out[2], out[3]
			start += dp
			if ph += dq; ph >= q {
				ph -= q
				start++
			}
		}
	}
}

// scratch returns a float32 buffer of n values from the free list.
func (rs *Resampler) scratch(n int) []float32 {
	rs.mu.Lock()
	defer rs.mu.Unlock()
	for k := len(rs.free) - 1; k >= 0; k-- {
		if b := rs.free[k]; cap(b) >= n {
			rs.free = append(rs.free[:k], rs.free[k+1:]...)
			return b[:n]
		}
	}
	return make([]float32, n)
}

func (rs *Resampler) release(b []float32) {
	rs.mu.Lock()
	if len(rs.free) < 8 {
		rs.free = append(rs.free, b)
	}
	rs.mu.Unlock()
}

// oneRational is one for an exact-phase plan, with x32 the float32 copy
// of x.
func (rs *Resampler) oneRational(x []float64, x32 []float32, m int) float64 {
	taps := rs.taps
	start, _, _ := rs.locate(m)
	row := m % rs.q // the table row of phase (m·p) mod q
	if start < 0 || start+taps > len(x) {
		return dotEdge(rs.table[row*taps:(row+1)*taps], x, start)
	}
	var out [4]float64
	Dot4s32(&out, &rs.table32[row*taps], &x32[start], 0, taps)
	return out[0]
}

// one computes output m alone, with the same rounding as the grouped
// kernels where the kernel lies inside x.
func (rs *Resampler) one(x []float64, m int) float64 {
	if rs.q != 0 {
		// oneRational on a float32 copy of the kernel's window only.
		start, _, _ := rs.locate(m)
		if start < 0 || start+rs.taps > len(x) {
			return rs.oneRational(x, nil, m)
		}
		w := make([]float32, rs.taps)
		for i := range w {
			w[i] = float32(x[start+i])
		}
		var out [4]float64
		Dot4s32(&out, &rs.table32[m%rs.q*rs.taps], &w[0], 0, rs.taps)
		return out[0]
	}
	taps := rs.taps
	start, ph, a := rs.locate(m)
	if start < 0 || start+taps > len(x) {
		v := dotEdge(rs.table[ph*taps:(ph+1)*taps], x, start)
		if rs.q == 0 {
			v += a * (dotEdge(rs.table[(ph+1)*taps:(ph+2)*taps], x, start) - v)
		}
		return v
	}
	var out [4]float64
	h0, h1 := &rs.table[ph*taps], &rs.table[ph*taps]
	if rs.q == 0 {
		h1 = &rs.table[(ph+1)*taps]
	}
	h := [4]*float64{h0, h1, h0, h1}
	xs := [4]*float64{&x[start], &x[start], &x[start], &x[start]}
	Dot4(&out, &h, &xs, taps)
	if rs.q == 0 {
		return out[0] + a*(out[1]-out[0])
	}
	return out[0]
}

// locate returns, for output sample m, the first input index the kernel
// reads, the table phase and (interpolated table only) the fraction
// between that phase and the next.
func (rs *Resampler) locate(m int) (start, ph int, a float64) {
	if rs.q != 0 {
		num := m * rs.p
		return num/rs.q - rs.off, num % rs.q, 0
	}
	t := float64(m) * rs.ratio
	fi := math.Floor(t)
	u := (t - fi) * interPhases
	fu := math.Floor(u)
	return int(fi) - rs.off, int(fu), u - fu
}

// dotEdge is Σ h[j]·x[start+j] with zeros outside x.
func dotEdge(h, x []float64, start int) float64 {
	var s float64
	for j, c := range h {
		if k := start + j; k >= 0 && k < len(x) {
			s = math.FMA(c, x[k], s)
		}
	}
	return s
}

// kaiserSinc is the Kaiser-windowed ideal low-pass impulse response with
// cutoff fc (cycles per sample, unity gain at DC) at time t, window
// half-width half samples.
func kaiserSinc(t, fc, half, beta, i0beta float64) float64 {
	if math.Abs(t) >= half {
		return 0
	}
	u := t / half
	w := besselI0(beta*math.Sqrt(1-u*u)) / i0beta
	x := 2 * fc * t
	s := 1.0
	if x != 0 {
		s = math.Sin(math.Pi*x) / (math.Pi * x)
	}
	return 2 * fc * s * w
}

// KaiserBeta returns the Kaiser window β for a stopband attenuation of
// attDB decibels (Kaiser 1974; Oppenheim & Schafer, Discrete-Time Signal
// Processing, 2nd ed., Eq. 7.62).
func KaiserBeta(attDB float64) float64 {
	switch {
	case attDB > 50:
		return 0.1102 * (attDB - 8.7)
	case attDB >= 21:
		return 0.5842*math.Pow(attDB-21, 0.4) + 0.07886*(attDB-21)
	}
	return 0
}

// besselI0 is the modified Bessel function of the first kind, order 0, by
// its power series Σ ((x/2)^k / k!)², which converges quickly for the
// arguments a Kaiser window needs (x ≤ ~20).
func besselI0(x float64) float64 {
	h := x / 2
	sum, term := 1.0, 1.0
	for k := 1; k < len(invK); k++ {
		term *= h * invK[k]
		t2 := term * term
		sum += t2
		if t2 < sum*1e-17 {
			break
		}
	}
	return sum
}

// invK[k] = 1/k, so the series multiplies instead of dividing.
var invK = func() (t [200]float64) {
	for k := 1; k < len(t); k++ {
		t[k] = 1 / float64(k)
	}
	return t
}()

// rational reports r = p/q exactly in float64 terms (to 1e-12 relative)
// with the smallest q ≤ maxQ.
func rational(r float64, maxQ int) (p, q int, ok bool) {
	for q = 1; q <= maxQ; q++ {
		pf := math.Round(r * float64(q))
		if pf < 1 || pf > 1<<30 {
			continue
		}
		if math.Abs(pf/float64(q)-r) <= 1e-12*r {
			p = int(pf)
			if gcd(p, q) == 1 {
				return p, q, true
			}
		}
	}
	return 0, 0, false
}

func gcd(a, b int) int {
	for b != 0 {
		a, b = b, a%b
	}
	return a
}
