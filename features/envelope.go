package features

import (
	"fmt"
	"math"
	"math/cmplx"

	"thrum/machine/dsp"
)

// EnvelopePlan does envelope analysis for bearing diagnostics: band-pass
// the signal around a structural resonance, take the magnitude of its
// analytic signal (the Hilbert envelope), and look at the spectrum of that
// envelope, where the repetition rates of impacts (BPFO, BPFI, 2·BSF, FTF)
// and their modulation sidebands appear as lines (Randall & Antoni 2011,
// "Rolling element bearing diagnostics — A tutorial").
//
// The steps, for a signal x of n samples at fs Hz:
//
//  1. Zero-pad x to N, the smallest power of two ≥ n.
//  2. Real FFT X[k], k = 0..N/2, bin width fs/N.
//  3. Band mask and analytic signal in one step: Z[k] = c_k·X[k] for
//     lo ≤ k·fs/N ≤ hi and 0 elsewhere, with c_0 = c_{N/2} = 1 and c_k = 2
//     otherwise; Z[k] = 0 for negative frequencies. The mask is a brick wall
//     with zero phase, so the envelope is not delayed.
//  4. z = IFFT(Z), envelope e[i] = |z[i]| for i < n.
//  5. Spectrum: remove the mean of e, multiply by a periodic Hann window
//     w[i] = ½(1 − cos 2πi/n), zero-pad to N, real FFT E[k], and report the
//     one-sided amplitude spectrum A[k] = 2·|E[k]|/Σw (|E[0]|/Σw at DC and
//     |E[N/2]|/Σw at Nyquist). A sinusoid in the envelope of amplitude a,
//     centred on a bin, reads a.
//
// For an AM tone (1 + m·cos 2πf_m t)·cos 2πf_c t with the band covering
// f_c ± f_m, the envelope is 1 + m·cos 2πf_m t, so the envelope spectrum
// has a line of amplitude m at f_m: m relative to the envelope's mean.
//
// A plan holds the FFT plans and scratch space for signals of one length;
// Reset moves it to another length, keeping the FFT plans when the padded
// size stays the same. Build it once with NewEnvelopePlan and reuse it; it
// is not safe for concurrent use.
type EnvelopePlan struct {
	n, size int
	fft     *dsp.RealFFT
	cfft    *dsp.ComplexFFT
	coef    []complex128 // size/2+1 real-FFT coefficients
	ana     []complex128 // size analytic spectrum, then analytic signal
	pad     []float64    // size real scratch
	win     []float64    // n periodic Hann
	winSum  float64
}

// NewEnvelopePlan returns a plan for signals of n samples. It panics if
// n < 1.
func NewEnvelopePlan(n int) *EnvelopePlan {
	if n < 1 {
		panic(fmt.Sprintf("features: envelope plan length %d < 1", n))
	}
	p := &EnvelopePlan{}
	p.Reset(n)
	return p
}

// Reset makes the plan accept signals of n samples. It panics if n < 1.
func (p *EnvelopePlan) Reset(n int) {
	if n < 1 {
		panic(fmt.Sprintf("features: envelope plan length %d < 1", n))
	}
	size := 1
	for size < n {
		size <<= 1
	}
	if size < 2 {
		size = 2
	}
	if size != p.size {
		p.size = size
		p.fft = dsp.NewRealFFT(size)
		p.cfft = dsp.NewComplexFFT(size)
		p.coef = make([]complex128, size/2+1)
		p.ana = make([]complex128, size)
		p.pad = make([]float64, size)
	}
	if n != p.n {
		p.n = n
		p.win = envResize(p.win, n)
		p.winSum = 0
		for i := range p.win {
			p.win[i] = 0.5 * (1 - math.Cos(2*math.Pi*float64(i)/float64(n)))
			p.winSum += p.win[i]
		}
		if n == 1 {
			p.win[0], p.winSum = 1, 1
		}
	}
}

// Len returns the signal length the plan accepts.
func (p *EnvelopePlan) Len() int { return p.n }

// SpectrumLen returns the length of the envelope spectrum, N/2+1 where N is
// the padded FFT size.
func (p *EnvelopePlan) SpectrumLen() int { return p.size/2 + 1 }

// BinHz returns the spacing of the envelope spectrum's bins at fs Hz.
func (p *EnvelopePlan) BinHz(fs float64) float64 { return fs / float64(p.size) }

// Envelope writes the Hilbert envelope of x, band-limited to [lo, hi] Hz,
// into dst and returns it. lo ≤ 0 means from DC; hi ≤ 0 or hi ≥ fs/2 means up
// to Nyquist. dst is reused when its capacity is at least len(x); nil
// allocates. It panics if len(x) != p.Len(), fs ≤ 0, or lo ≥ hi with a
// positive hi below Nyquist.
func (p *EnvelopePlan) Envelope(dst, x []float64, fs, lo, hi float64) []float64 {
	if len(x) != p.n {
		panic(fmt.Sprintf("features: envelope input length %d, plan length %d", len(x), p.n))
	}
	if !(fs > 0) {
		panic(fmt.Sprintf("features: envelope sample rate %g must be > 0", fs))
	}
	nyq := fs / 2
	if hi <= 0 || hi > nyq {
		hi = nyq
	}
	if lo >= hi {
		panic(fmt.Sprintf("features: envelope band [%g, %g] Hz is empty", lo, hi))
	}
	dst = envResize(dst, p.n)

	copy(p.pad, x)
	clear(p.pad[p.n:])
	p.fft.Forward(p.coef, p.pad)

	binHz := fs / float64(p.size)
	half := p.size / 2
	clear(p.ana)
	for k := 0; k <= half; k++ {
		f := float64(k) * binHz
		if f < lo || f > hi {
			continue
		}
		c := p.coef[k]
		if k != 0 && k != half {
			c *= 2
		}
		p.ana[k] = c
	}
	z := p.cfft.Inverse(p.ana, p.ana)
	scale := 1 / float64(p.size)
	for i := range dst {
		dst[i] = cmplx.Abs(z[i]) * scale
	}
	return dst
}

// Spectrum writes the one-sided amplitude spectrum of the mean-removed,
// Hann-windowed envelope of x (band [lo, hi] Hz as for Envelope) into dst
// and returns it with the bin width in Hz. Bin k is at k·binHz. dst is
// reused when its capacity is at least p.SpectrumLen(); nil allocates. It
// panics as Envelope does.
func (p *EnvelopePlan) Spectrum(dst, x []float64, fs, lo, hi float64) (spec []float64, binHz float64) {
	env := p.Envelope(p.pad[:p.n], x, fs, lo, hi)
	var mean float64
	for _, v := range env {
		mean += v
	}
	mean /= float64(p.n)
	for i := range env {
		env[i] = (env[i] - mean) * p.win[i]
	}
	clear(p.pad[p.n:])
	p.fft.Forward(p.coef, p.pad)

	spec = envResize(dst, len(p.coef))
	half := p.size / 2
	for k, c := range p.coef {
		a := cmplx.Abs(c) / p.winSum
		if k != 0 && k != half {
			a *= 2
		}
		spec[k] = a
	}
	return spec, fs / float64(p.size)
}

// EnvelopeSpectrum returns the envelope spectrum of x at fs Hz in the band
// [lo, hi] Hz, and its bin width in Hz; see EnvelopePlan.Spectrum. It builds
// a plan for each call: reuse an EnvelopePlan for many signals of one length.
func EnvelopeSpectrum(dst []float64, x []float64, fs, lo, hi float64) (spec []float64, binHz float64) {
	return NewEnvelopePlan(len(x)).Spectrum(dst, x, fs, lo, hi)
}

// HilbertEnvelope writes the full-band Hilbert envelope |x + j·H{x}| of x
// into dst and returns it; dst is reused when its capacity is at least
// len(x), nil allocates. It panics if x is empty.
func HilbertEnvelope(dst, x []float64) []float64 {
	return NewEnvelopePlan(len(x)).Envelope(dst, x, 1, 0, 0)
}

func envResize(s []float64, n int) []float64 {
	if cap(s) < n {
		return make([]float64, n)
	}
	return s[:n]
}
