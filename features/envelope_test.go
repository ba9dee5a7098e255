package features

import (
	"fmt"
	"math"
	"testing"
)

// envAMTone returns (1 + m·cos 2πf_m t)·cos 2πf_c t, n samples at fs Hz.
func envAMTone(n int, fs, fc, fm, m float64) []float64 {
	x := make([]float64, n)
	for i := range x {
		t := float64(i) / fs
		x[i] = (1 + m*math.Cos(2*math.Pi*fm*t)) * math.Cos(2*math.Pi*fc*t)
	}
	return x
}

// The Hilbert envelope of an AM tone is its modulating signal
// 1 + m·cos 2πf_m t when the spectra of carrier and modulation do not
// overlap (Bedrosian's product theorem, E. Bedrosian, Proc. IEEE 51, 1963,
// from memory; derived for this tone).
func TestHilbertEnvelopeAMTone(t *testing.T) {
	for _, tc := range []struct {
		n          int
		fs, fc, fm float64
		m          float64
		tol        float64
		edge       float64 // fraction of n ignored at each end (padding wraps)
	}{
		// n a power of two and whole cycles: the tone is periodic in the
		// FFT frame, so the envelope is exact to rounding.
		{n: 16384, fs: 16384, fc: 3000, fm: 30, m: 0.5, tol: 1e-9},
		{n: 16384, fs: 16384, fc: 1000, fm: 7, m: 0.9, tol: 1e-9},
		// Padded to 16384: exact away from the ends.
		{n: 12000, fs: 12000, fc: 3000, fm: 30, m: 0.3, tol: 2e-3, edge: 0.1},
	} {
		t.Run(fmt.Sprintf("n%d_m%g", tc.n, tc.m), func(t *testing.T) {
			x := envAMTone(tc.n, tc.fs, tc.fc, tc.fm, tc.m)
			env := HilbertEnvelope(nil, x)
			if len(env) != tc.n {
				t.Fatalf("len %d, want %d", len(env), tc.n)
			}
			skip := int(tc.edge * float64(tc.n))
			var worst float64
			for i := skip; i < tc.n-skip; i++ {
				want := 1 + tc.m*math.Cos(2*math.Pi*tc.fm*float64(i)/tc.fs)
				worst = math.Max(worst, math.Abs(env[i]-want))
			}
			if worst > tc.tol {
				t.Errorf("max |envelope − (1 + m cos)| = %.3g, want ≤ %g", worst, tc.tol)
			}
		})
	}
}

// The envelope spectrum of the AM tone has a line of amplitude m at f_m,
// relative to an envelope mean of 1 (Randall & Antoni 2011, envelope
// analysis; the value is derived from the envelope 1 + m·cos 2πf_m t).
func TestEnvelopeSpectrumAMLine(t *testing.T) {
	for _, tc := range []struct {
		n          int
		fs, fc, fm float64
		m          float64
		lo, hi     float64
		tol        float64 // relative
	}{
		{n: 16384, fs: 16384, fc: 3000, fm: 30, m: 0.5, lo: 2000, hi: 4000, tol: 1e-6},
		{n: 16384, fs: 16384, fc: 3000, fm: 107, m: 0.2, lo: 2500, hi: 3500, tol: 1e-6},
		{n: 16384, fs: 16384, fc: 3000, fm: 30, m: 0.5, lo: 0, hi: 0, tol: 1e-6},
		// Padded (12000 → 16384): f_m falls between bins, Hann scalloping
		// on the padded grid stays well under 1 %.
		{n: 12000, fs: 12000, fc: 3000, fm: 30, m: 0.4, lo: 2000, hi: 4000, tol: 1e-2},
	} {
		t.Run(fmt.Sprintf("n%d_fm%g_band%g-%g", tc.n, tc.fm, tc.lo, tc.hi), func(t *testing.T) {
			x := envAMTone(tc.n, tc.fs, tc.fc, tc.fm, tc.m)
			spec, binHz := EnvelopeSpectrum(nil, x, tc.fs, tc.lo, tc.hi)
			size := 1
			for size < tc.n {
				size <<= 1
			}
			if len(spec) != size/2+1 || binHz != tc.fs/float64(size) {
				t.Fatalf("len %d bin %g Hz, want %d and %g", len(spec), binHz, size/2+1, tc.fs/float64(size))
			}
			k := envArgmax(spec, 1, len(spec))
			if f := float64(k) * binHz; math.Abs(f-tc.fm) > binHz {
				t.Errorf("strongest line at %.3f Hz, want %g Hz", f, tc.fm)
			}
			if got := spec[k]; math.Abs(got-tc.m)/tc.m > tc.tol {
				t.Errorf("line amplitude %.6g, want m = %g (tol %g)", got, tc.m, tc.tol)
			}
			// Mean removed: DC holds almost nothing.
			if spec[0] > 1e-3*tc.m {
				t.Errorf("DC %.3g after mean removal", spec[0])
			}
		})
	}
}

// A carrier outside the band contributes nothing to the envelope spectrum.
func TestEnvelopeSpectrumBandRejects(t *testing.T) {
	const n, fs = 16384, 16384.0
	in := envAMTone(n, fs, 3000, 30, 0.5)
	out := envAMTone(n, fs, 500, 45, 0.8)
	for i := range in {
		in[i] += out[i]
	}
	spec, binHz := EnvelopeSpectrum(nil, in, fs, 2000, 4000)
	at := func(f float64) float64 { return spec[int(math.Round(f/binHz))] }
	if got := at(30); math.Abs(got-0.5) > 1e-6 {
		t.Errorf("in-band line %.6g, want 0.5", got)
	}
	if got := at(45); got > 1e-9 {
		t.Errorf("out-of-band modulation leaks: %.3g at 45 Hz", got)
	}
	// Full band: the 500 Hz carrier's modulation now shows.
	full, _ := EnvelopeSpectrum(nil, in, fs, 0, 0)
	if full[int(math.Round(45/binHz))] < 0.05 {
		t.Errorf("full-band envelope lost the 45 Hz modulation")
	}
}

// The band mask has zero phase: the envelope of a Gaussian burst peaks at
// the burst's centre, not later as after a causal filter.
func TestEnvelopeZeroPhase(t *testing.T) {
	const n, fs = 8000, 16000.0
	const centre, sigma = 3217, 40.0
	x := make([]float64, n)
	for i := range x {
		d := float64(i - centre)
		x[i] = math.Exp(-d*d/(2*sigma*sigma)) * math.Cos(2*math.Pi*3000*d/fs)
	}
	p := NewEnvelopePlan(n)
	env := p.Envelope(nil, x, fs, 2000, 4000)
	if k := envArgmax(env, 0, n); k != centre {
		t.Errorf("envelope peak at sample %d, want %d", k, centre)
	}
	// Plan reuse gives the same result, and dst is reused.
	buf := make([]float64, 0, n)
	again := p.Envelope(buf, x, fs, 2000, 4000)
	if &again[0] != &buf[:1][0] {
		t.Errorf("dst with enough capacity was not reused")
	}
	for i := range env {
		if env[i] != again[i] {
			t.Fatalf("plan reuse changed sample %d", i)
		}
	}
}

func TestEnvelopePanics(t *testing.T) {
	p := NewEnvelopePlan(100)
	x := make([]float64, 100)
	for _, tc := range []struct {
		name string
		f    func()
	}{
		{"length", func() { p.Envelope(nil, make([]float64, 99), 1000, 0, 0) }},
		{"empty band", func() { p.Spectrum(nil, x, 1000, 300, 200) }},
		{"band above nyquist", func() { p.Spectrum(nil, x, 1000, 600, 0) }},
		{"rate", func() { p.Envelope(nil, x, 0, 0, 0) }},
		{"plan length", func() { NewEnvelopePlan(0) }},
	} {
		t.Run(tc.name, func(t *testing.T) {
			defer func() {
				if recover() == nil {
					t.Errorf("no panic")
				}
			}()
			tc.f()
		})
	}
}

func envArgmax(x []float64, from, to int) int {
	k := from
	for i := from; i < to; i++ {
		if x[i] > x[k] {
			k = i
		}
	}
	return k
}

func BenchmarkEnvelopeSpectrum(b *testing.B) {
	for _, sec := range []float64{1, 10} {
		const fs = 16000.0
		n := int(sec * fs)
		x := envAMTone(n, fs, 3000, 107, 0.5)
		b.Run(fmt.Sprintf("%gs_16k", sec), func(b *testing.B) {
			p := NewEnvelopePlan(n)
			spec := make([]float64, p.SpectrumLen())
			for b.Loop() {
				p.Spectrum(spec, x, fs, 2000, 4000)
			}
		})
	}
}
