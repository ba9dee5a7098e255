package room

import (
	"fmt"
	"math"

	"thrum/machine/dsp"
)

// Reverb convolves signals with a room impulse response.
type Reverb struct {
	// IR is the impulse response; it must not be modified after NewReverb.
	IR []float64
	// Fs is the IR's sampling rate in Hz; zero skips the rate check.
	Fs float64

	conv *dsp.Convolver // nil for a literal Reverb: Apply then builds one per call
}

// NewReverb returns a Reverb for ir sampled at fs Hz (0: unchecked) with the
// FFT of ir computed once. The result is safe for concurrent use.
func NewReverb(ir []float64, fs float64) Reverb {
	v := Reverb{IR: ir, Fs: fs}
	if len(ir) > 0 {
		v.conv = dsp.NewConvolver(ir)
	}
	return v
}

// Apply writes the causal convolution (IR * x) cut to len(x) into dst (nil
// allocates; dst may be x itself, no other overlap) and returns it. fs is
// the rate of x; Apply panics if it differs from a non-zero v.Fs, since
// mixing rates is a caller error.
func (v Reverb) Apply(dst, x []float64, fs float64) []float64 {
	if v.Fs != 0 && fs != v.Fs {
		panic(fmt.Sprintf("room: Reverb.Apply at %g Hz with an IR sampled at %g Hz", fs, v.Fs))
	}
	if len(v.IR) == 0 {
		if cap(dst) < len(x) {
			dst = make([]float64, len(x))
		}
		dst = dst[:len(x)]
		clear(dst)
		return dst
	}
	c := v.conv
	if c == nil || c.Len() != len(v.IR) {
		c = dsp.NewConvolver(v.IR)
	}
	if len(x) > 0 && cap(dst) > 0 && &dst[:1][0] == &x[0] {
		x = append([]float64(nil), x...) // the convolver needs distinct buffers
	}
	return c.Apply(dst, x)
}

// UnitEnergy returns a copy of h scaled so that Σh² = 1 (for measured IR
// files, whose level is arbitrary). An all-zero h is copied unchanged.
func UnitEnergy(h []float64) []float64 {
	out := make([]float64, len(h))
	e := 0.0
	for _, x := range h {
		e += x * x
	}
	if e == 0 {
		copy(out, h)
		return out
	}
	s := 1 / math.Sqrt(e)
	for i, x := range h {
		out[i] = x * s
	}
	return out
}
