package features

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
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
		{"baseband length", func() { p.BasebandSpectrum(nil, make([]float64, 99), 1000, 100, 200, 50) }},
		{"baseband empty band", func() { p.BasebandSpectrum(nil, x, 1000, 300, 200, 50) }},
		{"baseband limit", func() { p.BasebandSpectrum(nil, x, 1000, 100, 200, 0) }},
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
		b.Run(fmt.Sprintf("%gs_16k_baseband_to_1kHz", sec), func(b *testing.B) {
			p := NewEnvelopePlan(n)
			spec := make([]float64, p.SpectrumLen())
			for b.Loop() {
				p.BasebandSpectrum(spec, x, fs, 2000, 4000, 1000)
			}
		})
	}
}

// envImpacts returns n samples at fs of decaying 3 kHz bursts (τ = 2 ms)
// repeating at rate Hz, in Gaussian noise of standard deviation sd: the
// signature of a localised bearing defect (Randall & Antoni 2011).
func envImpacts(n int, fs, rate, sd float64, seed uint64) []float64 {
	rng := rand.New(rand.NewPCG(seed, 1))
	x := make([]float64, n)
	for i := range x {
		x[i] = sd * rng.NormFloat64()
	}
	for t0 := 0.0; int(t0*fs) < n; t0 += 1 / rate {
		for i := int(t0 * fs); i < n && float64(i)/fs < t0+0.02; i++ {
			t := float64(i)/fs - t0
			x[i] += math.Exp(-t/0.002) * math.Sin(2*math.Pi*3000*t)
		}
	}
	return x
}

// The baseband envelope spectrum has Spectrum's bins and its lines: an AM
// tone's line at f_m with amplitude m (derived from the envelope
// 1 + m·cos 2πf_m t), an impact train's strongest line within one bin of
// its repetition rate and of Spectrum's, and elsewhere values within a few
// per cent of the highest line (what folds from beyond the band's width).
// A band too wide to decimate gives Spectrum's bytes.
func TestBasebandSpectrumMatchesSpectrum(t *testing.T) {
	for _, tc := range []struct {
		name       string
		x          []float64
		fs, lo, hi float64
		maxHz      float64
		line, m    float64 // source line (Hz) and, for an AM tone, its amplitude
		dec        int
		tol        float64 // largest |baseband − Spectrum| below maxHz, relative to the highest line
	}{
		{"AM tone", envAMTone(16384, 16384, 3000, 30, 0.5), 16384, 2000, 4000, 1000, 30, 0.5, 4, 1e-3},
		{"AM tone, odd length", envAMTone(12000, 12000, 3000, 107, 0.3), 12000, 2500, 3500, 400, 107, 0.3, 8, 2e-2},
		{"impacts, 3 kHz band", envImpacts(155328, 16000, 97.3, 0.05, 1), 16000, 2000, 5000, 1000, 97.3, 0, 4, 4e-2},
		{"impacts, narrow band", envImpacts(50000, 16000, 61.7, 0.05, 2), 16000, 2500, 3500, 500, 61.7, 0, 8, 4e-2},
		{"full band", envAMTone(16384, 16384, 3000, 30, 0.5), 16384, 0, 0, 1000, 30, 0.5, 1, 0},
	} {
		t.Run(tc.name, func(t *testing.T) {
			p := NewEnvelopePlan(len(tc.x))
			if d := p.Decimation(tc.fs, tc.lo, tc.hi, tc.maxHz); d != tc.dec {
				t.Errorf("decimation %d, want %d", d, tc.dec)
			}
			ref, refBin := p.Spectrum(nil, tc.x, tc.fs, tc.lo, tc.hi)
			got, bin := p.BasebandSpectrum(nil, tc.x, tc.fs, tc.lo, tc.hi, tc.maxHz)
			if bin != refBin {
				t.Fatalf("bin %g Hz, Spectrum's %g Hz", bin, refBin)
			}
			keep := int(tc.maxHz/bin) + 1
			if len(got) < keep {
				t.Fatalf("%d bins, want ≥ %d (up to %g Hz)", len(got), keep, tc.maxHz)
			}
			from := int(5/bin) + 1 // above the mean's leakage
			kr, kg := envArgmax(ref, from, keep), envArgmax(got, from, keep)
			if kg-kr > 1 || kr-kg > 1 {
				t.Errorf("strongest line at bin %d, Spectrum's at %d", kg, kr)
			}
			if src := tc.line / bin; math.Abs(float64(kg)-src) > 1 {
				t.Errorf("strongest line at %.2f Hz, source at %.2f Hz (bin %.3g Hz)", float64(kg)*bin, tc.line, bin)
			}
			if tc.m > 0 && math.Abs(got[kg]-tc.m) > 0.02*tc.m {
				t.Errorf("line amplitude %.4f, want %g", got[kg], tc.m)
			}
			var worst float64
			for k := 1; k < keep; k++ {
				worst = math.Max(worst, math.Abs(got[k]-ref[k]))
			}
			if worst > tc.tol*ref[kr] {
				t.Errorf("largest difference %.3g of the line, want ≤ %g", worst/ref[kr], tc.tol)
			}
			if tc.dec == 1 && !slices.Equal(got, ref) {
				t.Errorf("undecimated baseband spectrum differs from Spectrum")
			}
		})
	}
}

// A plan reset to another length gives what a fresh plan gives, even when
// the decimated length stays the same.
func TestBasebandSpectrumReset(t *testing.T) {
	const fs = 16000
	a, b := envImpacts(40001, fs, 80, 0.05, 3), envImpacts(40003, fs, 80, 0.05, 4)
	p := NewEnvelopePlan(len(a))
	p.BasebandSpectrum(nil, a, fs, 2000, 5000, 1000)
	p.Reset(len(b))
	got, _ := p.BasebandSpectrum(nil, b, fs, 2000, 5000, 1000)
	want, _ := NewEnvelopePlan(len(b)).BasebandSpectrum(nil, b, fs, 2000, 5000, 1000)
	if !slices.Equal(got, want) {
		t.Errorf("reused plan differs from a fresh one")
	}
}
