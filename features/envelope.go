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

	// baseband path (BasebandSpectrum): plans and scratch of the
	// decimated length m = size/dec
	m       int
	cfftM   *dsp.ComplexFFT
	fftM    *dsp.RealFFT
	anaM    []complex128 // m
	coefM   []complex128 // m/2+1
	padM    []float64    // m
	dec     int          // decimation of winM
	winM    []float64    // the Hann window of n at every dec-th sample
	winSumM float64
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
		p.dec = 0 // the decimated window is of n
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

// BasebandSpectrum is Spectrum computed at baseband, for the bins from DC
// up to maxHz (at least; the spectrum it returns may go further): the same
// bins (k·binHz, binHz = fs/N) and, within the rounding and the aliasing
// described below, the same amplitudes, for a fraction of the work.
//
// The band's analytic spectrum Z[k], k = k_lo..k_hi, is moved down to
// Z'[j] = Z[k_lo + j] and transformed back at the length M = N/D, for the
// largest power of two D with M > k_hi − k_lo and a decimated rate
// fs/D ≥ W + maxHz and ≥ 2·maxHz, where W = (k_hi − k_lo)·binHz is the
// band's width. Then z'[m] = e^{−2πi·k_lo·m/M}·z[m·D]: a shift in
// frequency only turns the phase, so |z'[m]| is the envelope at every
// D-th sample, exactly (to rounding). The envelope spectrum is taken of
// those ⌈n/D⌉ samples, mean removed and windowed by the same Hann window
// sampled at every D-th sample, zero-padded to M: bin k of that M-point
// transform is at k·(fs/D)/M = k·fs/N, the bin of Spectrum. The squared
// envelope |z|² has no content above W, so at fs/D ≥ W + maxHz none of it
// folds below maxHz; the envelope |z| folds only the tail of its spectrum
// beyond W there (for broadband impacts in a 3 kHz band at 16 kHz, D = 4,
// the bins below 1 kHz move by up to about 2 % of the highest line, the
// lines stay on their bins). When no D > 1 fits it is Spectrum.
//
// dst is reused when its capacity suffices; nil allocates. It panics as
// Envelope does, or if maxHz ≤ 0.
func (p *EnvelopePlan) BasebandSpectrum(dst, x []float64, fs, lo, hi, maxHz float64) (spec []float64, binHz float64) {
	if len(x) != p.n {
		panic(fmt.Sprintf("features: envelope input length %d, plan length %d", len(x), p.n))
	}
	if !(fs > 0) {
		panic(fmt.Sprintf("features: envelope sample rate %g must be > 0", fs))
	}
	if !(maxHz > 0) {
		panic(fmt.Sprintf("features: envelope spectrum limit %g Hz must be > 0", maxHz))
	}
	nyq := fs / 2
	if hi <= 0 || hi > nyq {
		hi = nyq
	}
	if lo >= hi {
		panic(fmt.Sprintf("features: envelope band [%g, %g] Hz is empty", lo, hi))
	}
	binHz = fs / float64(p.size)
	half := p.size / 2
	klo, khi := bandBins(half, binHz, lo, hi)
	dec := p.Decimation(fs, lo, hi, maxHz)
	if dec == 1 || khi < klo {
		return p.Spectrum(dst, x, fs, lo, hi)
	}
	m := p.size / dec
	p.resetBaseband(m, dec)

	copy(p.pad, x)
	clear(p.pad[p.n:])
	p.fft.Forward(p.coef, p.pad)

	// |Σ_j Z'[j]·e^{+2πijm/M}| = |Σ_j conj(Z'[j])·e^{−2πijm/M}|: a forward
	// transform of the conjugate gives the same magnitudes as the inverse.
	clear(p.anaM)
	for k := klo; k <= khi; k++ {
		c := p.coef[k]
		if k != 0 && k != half {
			c *= 2
		}
		p.anaM[k-klo] = complex(real(c), -imag(c))
	}
	z := p.cfftM.Forward(p.anaM, p.anaM)
	nd := len(p.winM)
	env := p.padM[:nd]
	scale := 1 / float64(p.size)
	var mean float64
	for i := range env {
		re, im := real(z[i]), imag(z[i])
		v := math.Sqrt(re*re+im*im) * scale
		env[i] = v
		mean += v
	}
	mean /= float64(nd)
	for i, w := range p.winM {
		env[i] = (env[i] - mean) * w
	}
	clear(p.padM[nd:])
	p.fftM.Forward(p.coefM, p.padM)

	spec = envResize(dst, len(p.coefM))
	halfM := m / 2
	for k, c := range p.coefM {
		re, im := real(c), imag(c)
		a := math.Sqrt(re*re+im*im) / p.winSumM
		if k != 0 && k != halfM {
			a *= 2
		}
		spec[k] = a
	}
	return spec, binHz
}

// Decimation returns the factor D BasebandSpectrum decimates the envelope
// by for a band [lo, hi] Hz at fs Hz and a spectrum up to maxHz (1 when
// the band is too wide for any). lo and hi are taken as Envelope takes them.
func (p *EnvelopePlan) Decimation(fs, lo, hi, maxHz float64) int {
	if !(fs > 0) || !(maxHz > 0) {
		return 1
	}
	nyq := fs / 2
	if hi <= 0 || hi > nyq {
		hi = nyq
	}
	binHz := fs / float64(p.size)
	klo, khi := bandBins(p.size/2, binHz, lo, hi)
	width := max(khi-klo, 0)
	w := float64(width) * binHz
	dec := 1
	for d := 2; d <= p.size/2; d *= 2 {
		r := fs / float64(d)
		if p.size/d <= width || r < w+maxHz || r < 2*maxHz {
			break
		}
		dec = d
	}
	return dec
}

// bandBins returns the first and last bin k ≤ half with lo ≤ k·binHz ≤ hi,
// by the same comparisons Envelope makes (khi < klo when none is).
func bandBins(half int, binHz, lo, hi float64) (klo, khi int) {
	klo = max(0, min(half+1, int(math.Ceil(lo/binHz))))
	for klo > 0 && float64(klo-1)*binHz >= lo {
		klo--
	}
	for klo <= half && float64(klo)*binHz < lo {
		klo++
	}
	khi = max(-1, min(half, int(math.Floor(hi/binHz))))
	for khi < half && float64(khi+1)*binHz <= hi {
		khi++
	}
	for khi >= 0 && float64(khi)*binHz > hi {
		khi--
	}
	return klo, khi
}

// resetBaseband sizes the baseband plans for length m and the decimated
// window for decimation dec.
func (p *EnvelopePlan) resetBaseband(m, dec int) {
	if m != p.m {
		p.m = m
		p.cfftM = dsp.NewComplexFFT(m)
		p.fftM = dsp.NewRealFFT(m)
		p.anaM = make([]complex128, m)
		p.coefM = make([]complex128, m/2+1)
		p.padM = make([]float64, m)
	}
	nd := (p.n + dec - 1) / dec
	if dec != p.dec || len(p.winM) != nd {
		p.dec = dec
		p.winM = envResize(p.winM, nd)
		p.winSumM = 0
		for i := range p.winM {
			p.winM[i] = 0.5 * (1 - math.Cos(2*math.Pi*float64(i*dec)/float64(p.n)))
			p.winSumM += p.winM[i]
		}
	}
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
