package neardup

import (
	"math"
	"math/bits"
	"sort"

	"thrum/machine/dsp"
)

// Fingerprint parameters (see doc.go, "Fingerprint").
const (
	// fpFrameSeconds is the analysis frame; it is rounded up to a power of
	// two in samples (512 at 16 kHz).
	fpFrameSeconds = 0.030
	// fpHopDiv: the hop is the frame divided by fpHopDiv (16 ms at 16 kHz).
	fpHopDiv = 2
	// fpBands is the number of bands; adjacent pairs give 32 bits per frame.
	fpBands = 33
	// fpLowHz and fpHighHz bound the bands (the top is also capped at 0.45 fs).
	fpLowHz  = 300
	fpHighHz = 6000
	// fpSmooth is the length, in frames, of the Hann-weighted moving sum
	// that turns frame energies into smooth band envelopes (~0.5 s).
	fpSmooth = 32
	// fpLag is the time step of the difference, in frames (64 ms).
	fpLag = 4
)

// Print is the fingerprint of one clip: one 32-bit sub-fingerprint per frame,
// in the manner of Haitsma & Kalker (2002).
type Print struct {
	Words []uint32
	// Hop is the frame hop in seconds.
	Hop float64
	// Dead marks the words that take no part in a comparison: those whose
	// band energies reach into a silent stretch (a zero-padded tail, digital
	// silence, a dropout). Nil when every word is live. Dead words are 0.
	Dead []bool
}

// live reports whether word t of p takes part in comparisons.
func (p Print) live(t int) bool { return p.Dead == nil || !p.Dead[t] }

// silentRel is the level, re the clip's median frame energy in the print's
// bands, below which a short frame counts as silent (−60 dB); silentAbs the
// absolute floor (a frame of exact zeros, or of float noise around zero).
const (
	silentRel = 1e-6
	silentAbs = 1e-20
)

// Fingerprinter computes prints at one sample rate. It holds its FFT plan and
// scratch buffers, so it is not safe for concurrent use: use one per worker.
type Fingerprinter struct {
	fs    float64
	n     int
	hop   int
	win   []float64
	lo    []int       // first bin of each band
	wt    [][]float64 // triangular weights of band k's bins from lo[k]
	fft   *dsp.RealFFT
	frame []float64
	pow   []float64
	raw   []float64
	sm    []float64
	tw    []float64
	tot   []float64
	med   []float64
}

// NewFingerprinter returns a fingerprinter for sample rate fs in Hz. It
// panics if fs < 4000 (a caller contract: the bands need at least 2 kHz of
// bandwidth).
func NewFingerprinter(fs float64) *Fingerprinter {
	if !(fs >= 4000) {
		panic("neardup: fingerprint sample rate below 4 kHz")
	}
	n := 1
	for float64(n) < fpFrameSeconds*fs {
		n *= 2
	}
	f := &Fingerprinter{fs: fs, n: n, hop: n / fpHopDiv}
	// Periodic Hann window.
	f.win = make([]float64, n)
	for i := range f.win {
		f.win[i] = 0.5 - 0.5*math.Cos(2*math.Pi*float64(i)/float64(n))
	}
	high := math.Min(fpHighHz, 0.45*fs)
	// Triangular bands on the mel scale m = 2595 log10(1 + f/700)
	// (O'Shaughnessy 1987, from memory): fpBands+2 points equally spaced
	// in mel from fpLowHz to high; band k rises from point k to point k+1
	// and falls to point k+2, so neighbouring bands overlap by half. A
	// small frequency shift (a speed change of a few per cent moves every
	// component by that fraction, about a third of a band) then moves energy
	// smoothly between neighbours instead of across a hard edge, which keeps
	// more bits of a sped-up copy (see doc.go).
	mel := func(hz float64) float64 { return 2595 * math.Log10(1+hz/700) }
	hz := func(m float64) float64 { return 700 * (math.Pow(10, m/2595) - 1) }
	m0, m1 := mel(fpLowHz), mel(high)
	step := (m1 - m0) / (fpBands + 1)
	binHz := fs / float64(n)
	f.lo = make([]int, fpBands)
	f.wt = make([][]float64, fpBands)
	for k := range fpBands {
		c := m0 + step*float64(k+1)
		lo := int(math.Ceil(hz(c-step) / binHz))
		hi := int(math.Floor(hz(c+step) / binHz))
		var w []float64
		for j := lo; j <= hi; j++ {
			w = append(w, max(0, 1-math.Abs(mel(float64(j)*binHz)-c)/step))
		}
		if len(w) == 0 { // narrower than a bin: the nearest bin
			lo, w = int(math.Round(hz(c)/binHz)), []float64{1}
		}
		f.lo[k], f.wt[k] = lo, w
	}
	f.fft = dsp.NewRealFFT(n)
	f.frame = make([]float64, n)
	f.pow = make([]float64, n/2+1)
	f.tw = make([]float64, fpSmooth)
	for k := range f.tw {
		f.tw[k] = 0.5 - 0.5*math.Cos(2*math.Pi*float64(k+1)/float64(fpSmooth+1))
	}
	return f
}

// Print computes the print of x into dst (reusing its slices; a zero Print
// allocates) and returns it. Bit m of frame t is
//
//	F(t,m) = 1  if  [S(t+L,m) − S(t+L,m+1)] − [S(t,m) − S(t,m+1)] > 0
//
// (Haitsma & Kalker 2002, eq. 1, with a lag of L = 4 frames), where
// S(t,m) = Σ_k w_k E(t+k,m) is the energy E of band m smoothed over 32
// frames with Hann weights w. The double difference cancels anything steady
// in time (a machine's harmonic lines, its long-term spectrum, the gain), so
// the bits follow the slow fluctuations of the noise and transients of one
// particular recording. A clip of n samples gives
// (n − frame)/hop + 1 − 31 − 4 words (589 for 10 s at 16 kHz); a shorter one
// none.
func (f *Fingerprinter) Print(dst Print, x []float64) Print {
	nraw := 0
	if len(x) >= f.n {
		nraw = (len(x)-f.n)/f.hop + 1
	}
	// Raw band energies, one row of fpBands per short frame.
	f.raw = growF(f.raw, nraw*fpBands)
	for t := range nraw {
		seg := x[t*f.hop : t*f.hop+f.n]
		for i, v := range seg {
			f.frame[i] = v * f.win[i]
		}
		f.fft.PowerSpectrum(f.pow, f.frame)
		row := f.raw[t*fpBands : (t+1)*fpBands]
		for m := range fpBands {
			var e float64
			w := f.wt[m]
			for j, v := range f.pow[f.lo[m] : f.lo[m]+len(w)] {
				e += w[j] * v
			}
			row[m] = e
		}
	}
	// Silent short frames: below silentRel times the median frame energy,
	// or below silentAbs. A word depends on the short frames t … t+K+L−1,
	// so it is dead when any of them is silent.
	f.tot = growF(f.tot, nraw)
	for t := range nraw {
		var e float64
		for _, v := range f.raw[t*fpBands : (t+1)*fpBands] {
			e += v
		}
		f.tot[t] = e
	}
	f.med = append(f.med[:0], f.tot...)
	sort.Float64s(f.med)
	floor := silentAbs
	if len(f.med) > 0 {
		floor = max(floor, silentRel*f.med[len(f.med)/2])
	}
	// Smoothed energies over fpSmooth short frames (triangular weights).
	K := fpSmooth
	ns := nraw - K + 1
	if ns < 0 {
		ns = 0
	}
	f.sm = growF(f.sm, ns*fpBands)
	for t := range ns {
		row := f.sm[t*fpBands : (t+1)*fpBands]
		for m := range row {
			row[m] = 0
		}
		for k := range K {
			w := f.tw[k]
			src := f.raw[(t+k)*fpBands : (t+k+1)*fpBands]
			for m, v := range src {
				row[m] += w * v
			}
		}
	}
	L := fpLag
	nf := ns - L
	if nf < 0 {
		nf = 0
	}
	dst.Words = grow(dst.Words, nf)
	dst.Hop = float64(f.hop) / f.fs
	dst.Dead = dst.Dead[:0]
	lastSilent := -1 << 30 // latest silent short frame seen
	span := fpSmooth + fpLag
	for t := 0; t < min(span-1, nraw); t++ {
		if f.tot[t] <= floor {
			lastSilent = t
		}
	}
	var d [fpBands - 1]float64
	for t := range nf {
		if e := t + span - 1; e < nraw && f.tot[e] <= floor {
			lastSilent = e
		}
		if lastSilent >= t {
			if dst.Dead == nil || len(dst.Dead) == 0 {
				dst.Dead = make([]bool, nf)
			}
			dst.Dead[t] = true
			dst.Words[t] = 0
			continue
		}
		a := f.sm[(t+L)*fpBands : (t+L+1)*fpBands]
		b := f.sm[t*fpBands : (t+1)*fpBands]
		var w uint32
		for m := range fpBands - 1 {
			d[m] = (a[m] - a[m+1]) - (b[m] - b[m+1])
			if d[m] > 0 {
				w |= 1 << m
			}
		}
		dst.Words[t] = w
	}
	if len(dst.Dead) == 0 {
		dst.Dead = nil
	}
	return dst
}

func growF(s []float64, n int) []float64 {
	if cap(s) < n {
		return make([]float64, n)
	}
	return s[:n]
}

// Fingerprint is a convenience for NewFingerprinter(fs).Print(Print{}, x).
// Build one Fingerprinter and reuse it when printing many clips.
func Fingerprint(x []float64, fs float64) Print {
	return NewFingerprinter(fs).Print(Print{}, x)
}

func grow(s []uint32, n int) []uint32 {
	if cap(s) < n {
		return make([]uint32, n)
	}
	return s[:n]
}

// ber returns the bit error rate between a[i] and b[i+off] over their
// overlap, and the number of frames compared.
func ber(a, b []uint32, off int) (float64, int) {
	lo, hi := 0, len(a)
	if -off > lo {
		lo = -off
	}
	if len(b)-off < hi {
		hi = len(b) - off
	}
	if hi <= lo {
		return 1, 0
	}
	diff := 0
	for i := lo; i < hi; i++ {
		diff += bits.OnesCount32(a[i] ^ b[i+off])
	}
	return float64(diff) / float64(32*(hi-lo)), hi - lo
}
