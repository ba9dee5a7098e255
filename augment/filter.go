package augment

import (
	"fmt"
	"math"
)

// Biquad is one second-order section normalised so a0 = 1:
// y[n] = B0·x[n] + B1·x[n−1] + B2·x[n−2] − A1·y[n−1] − A2·y[n−2].
type Biquad struct {
	B0, B1, B2, A1, A2 float64
}

// biquadState is a Direct Form I delay line.
type biquadState struct{ x1, x2, y1, y2 float64 }

func (s *biquadState) step(q *Biquad, x float64) float64 {
	y := q.B0*x + q.B1*s.x1 + q.B2*s.x2 - q.A1*s.y1 - q.A2*s.y2
	s.x2, s.x1 = s.x1, x
	s.y2, s.y1 = s.y1, y
	return y
}

// mag returns |H(e^{jω})| at ω radians per sample.
func (q *Biquad) mag(w float64) float64 {
	c1, s1 := math.Cos(w), math.Sin(w)
	c2, s2 := math.Cos(2*w), math.Sin(2*w)
	nr, ni := q.B0+q.B1*c1+q.B2*c2, -(q.B1*s1 + q.B2*s2)
	dr, di := 1+q.A1*c1+q.A2*c2, -(q.A1*s1 + q.A2*s2)
	return math.Sqrt((nr*nr + ni*ni) / (dr*dr + di*di))
}

// RBJ biquads (R. Bristow-Johnson, "Cookbook formulae for audio equalizer
// biquad filter coefficients"): w0 = 2π·f0/fs, α = sin(w0)/(2Q), all
// coefficients divided by a0 = 1 + α.

// LowPass returns the RBJ low-pass biquad at f0 Hz with quality Q.
func LowPass(fs, f0, q float64) Biquad {
	w0 := 2 * math.Pi * f0 / fs
	c, al := math.Cos(w0), math.Sin(w0)/(2*q)
	a0 := 1 + al
	return Biquad{B0: (1 - c) / 2 / a0, B1: (1 - c) / a0, B2: (1 - c) / 2 / a0, A1: -2 * c / a0, A2: (1 - al) / a0}
}

// HighPass returns the RBJ high-pass biquad at f0 Hz with quality Q.
func HighPass(fs, f0, q float64) Biquad {
	w0 := 2 * math.Pi * f0 / fs
	c, al := math.Cos(w0), math.Sin(w0)/(2*q)
	a0 := 1 + al
	return Biquad{B0: (1 + c) / 2 / a0, B1: -(1 + c) / a0, B2: (1 + c) / 2 / a0, A1: -2 * c / a0, A2: (1 - al) / a0}
}

// BandPass returns the RBJ band-pass biquad with constant 0 dB peak gain,
// centred on f0 Hz with quality Q.
func BandPass(fs, f0, q float64) Biquad {
	w0 := 2 * math.Pi * f0 / fs
	c, al := math.Cos(w0), math.Sin(w0)/(2*q)
	a0 := 1 + al
	return Biquad{B0: al / a0, B2: -al / a0, A1: -2 * c / a0, A2: (1 - al) / a0}
}

// BandPassEdges returns the constant-0-dB-peak second-order band-pass
// whose −3 dB points are exactly lo and hi Hz: the bilinear transform of
// the analog band-pass B·s/(s² + B·s + Ω0²) with both edges prewarped,
// Ωl,h = tan(π·f/fs), Ω0² = Ωl·Ωh, B = Ωh − Ωl. It has the RBJ BPF's form;
// only α and w0 are set from the edges rather than from a Q.
func BandPassEdges(fs, lo, hi float64) Biquad {
	wl, wh := math.Tan(math.Pi*lo/fs), math.Tan(math.Pi*hi/fs)
	o2, bw := wl*wh, wh-wl
	a0 := 1 + bw + o2
	return Biquad{B0: bw / a0, B2: -bw / a0, A1: 2 * (o2 - 1) / a0, A2: (1 - bw + o2) / a0}
}

// firstOrder returns the bilinear transform (prewarped at fc) of 1/(s+1)
// (low-pass) or s/(s+1) (high-pass) as a biquad with B2 = A2 = 0.
func firstOrder(fs, fc float64, high bool) Biquad {
	k := math.Tan(math.Pi * fc / fs)
	a1 := (k - 1) / (k + 1)
	if high {
		return Biquad{B0: 1 / (1 + k), B1: -1 / (1 + k), A1: a1}
	}
	return Biquad{B0: k / (1 + k), B1: k / (1 + k), A1: a1}
}

// Butterworth returns the sections of an order-n digital Butterworth
// low-pass (or high-pass) with its −3.0103 dB point at fc Hz: the bilinear
// transform, prewarped at fc, of the analog prototype, whose pole pairs
// have Q_k = 1/(2·sin((2k−1)π/(2n))), k = 1…⌊n/2⌋, plus one real pole when
// n is odd (Butterworth 1930). It panics if n < 1.
func Butterworth(fs, fc float64, n int, high bool) []Biquad {
	if n < 1 {
		panic("augment: Butterworth order must be at least 1")
	}
	secs := make([]Biquad, 0, (n+1)/2)
	for k := 1; k <= n/2; k++ {
		q := 1 / (2 * math.Sin(float64(2*k-1)*math.Pi/float64(2*n)))
		if high {
			secs = append(secs, HighPass(fs, fc, q))
		} else {
			secs = append(secs, LowPass(fs, fc, q))
		}
	}
	if n%2 == 1 {
		secs = append(secs, firstOrder(fs, fc, high))
	}
	return secs
}

// Telephone band edges, ITU-T P.310 (300–3400 Hz).
const (
	TelephoneLow  = 300.0
	TelephoneHigh = 3400.0
)

// telephoneOrder is the Butterworth order of each edge of the telephone
// preset when Filter.Order is 0 (24 dB/octave skirts; common practice).
const telephoneOrder = 4

// Filter is an IIR filter step.
//
//   - Type "lowpass" keeps frequencies below High Hz; "highpass" keeps those
//     above Low Hz; "bandpass" keeps Low…High Hz; "telephone" is a band-pass
//     on TelephoneLow…TelephoneHigh (Low and High ignored).
//   - Order 0 means one RBJ biquad: low- or high-pass with quality Q (0
//     means 1/√2); for "bandpass" BandPassEdges(Low, High), Q unused.
//     Order n ≥ 1 means an
//     order-n Butterworth cascade (band-pass: high-pass at Low then
//     low-pass at High, each of order n). "telephone" with Order 0 uses
//     order 4.
//
// dst may alias x. Apply panics with the Design error for an unknown type
// or a cutoff outside (0, fs/2); call Design first to check a step.
type Filter struct {
	Type      string
	Low, High float64
	Q         float64
	Order     int
}

// Design returns the filter's sections at sample rate fs.
func (f Filter) Design(fs float64) ([]Biquad, error) {
	q := f.Q
	if q == 0 {
		q = 1 / math.Sqrt2
	}
	ok := func(v float64) bool { return v > 0 && v < fs/2 }
	switch f.Type {
	case "lowpass":
		if !ok(f.High) {
			return nil, fmt.Errorf("augment: low-pass cutoff %v Hz outside (0, %v)", f.High, fs/2)
		}
		if f.Order == 0 {
			return []Biquad{LowPass(fs, f.High, q)}, nil
		}
		return Butterworth(fs, f.High, f.Order, false), nil
	case "highpass":
		if !ok(f.Low) {
			return nil, fmt.Errorf("augment: high-pass cutoff %v Hz outside (0, %v)", f.Low, fs/2)
		}
		if f.Order == 0 {
			return []Biquad{HighPass(fs, f.Low, q)}, nil
		}
		return Butterworth(fs, f.Low, f.Order, true), nil
	case "bandpass", "telephone":
		lo, hi, n := f.Low, f.High, f.Order
		if f.Type == "telephone" {
			lo, hi = TelephoneLow, TelephoneHigh
			if n == 0 {
				n = telephoneOrder
			}
		}
		if !ok(lo) || !ok(hi) || lo >= hi {
			return nil, fmt.Errorf("augment: band %v–%v Hz not inside (0, %v)", lo, hi, fs/2)
		}
		if n == 0 {
			return []Biquad{BandPassEdges(fs, lo, hi)}, nil
		}
		return append(Butterworth(fs, lo, n, true), Butterworth(fs, hi, n, false)...), nil
	}
	return nil, fmt.Errorf("augment: unknown filter type %q", f.Type)
}

// Apply implements Transform.
func (f Filter) Apply(dst, x []float64, fs float64) []float64 {
	secs, err := f.Design(fs)
	if err != nil {
		panic(err.Error())
	}
	return Cascade(dst, x, secs)
}

// Cascade runs x through the sections in order, each from zero state, and
// returns the result in dst (nil or short allocates; dst may alias x).
func Cascade(dst, x []float64, secs []Biquad) []float64 {
	dst = grow(dst, len(x))
	if len(secs) == 0 {
		copy(dst, x)
		return dst
	}
	src := x
	for i := range secs {
		q := &secs[i]
		var s biquadState
		for n, v := range src {
			dst[n] = s.step(q, v)
		}
		src = dst
	}
	return dst
}

// grow returns dst resized to n, allocating when its capacity is short.
func grow(dst []float64, n int) []float64 {
	if cap(dst) < n {
		return make([]float64, n)
	}
	return dst[:n]
}
