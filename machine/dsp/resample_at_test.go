package dsp

import (
	"math"
	"testing"
)

// Converting recordings to a working rate: 48 kHz → 16 kHz is the exact
// ratio 3/1, 44.1 kHz → 16 kHz 441/160 (rates reduced by their gcd). A
// tone keeps its frequency and level, and what lay above the new Nyquist
// frequency is gone (≥ 80 dB down, the resampler's design rule).
func TestRateConversion(t *testing.T) {
	for _, c := range []struct {
		from, to int
		p, q     int
	}{
		{48000, 16000, 3, 1},
		{44100, 16000, 441, 160},
		{12000, 16000, 3, 4},
	} {
		rs := NewResampler(float64(c.from) / float64(c.to))
		if p, q, ok := rs.Fraction(); !ok || p != c.p || q != c.q {
			t.Errorf("%d → %d: fraction %d/%d (%v), want %d/%d", c.from, c.to, p, q, ok, c.p, c.q)
		}
		fs, fo := float64(c.from), float64(c.to)
		n := c.from / 2
		// An in-band tone: same frequency, same level.
		f := 1234.5
		y := rs.Apply(nil, tone(n, f, fs, 0.5, 0.3))
		if got := peakFreq(t, y, fo, f-50, f+50); math.Abs(got-f) > 1e-5*f {
			t.Errorf("%d → %d: tone %v Hz came out at %.5f Hz", c.from, c.to, f, got)
		}
		amp, _ := fitTone(y, f, fo, 300, len(y)-300)
		if d := math.Abs(db(amp / 0.5)); d > 0.01 {
			t.Errorf("%d → %d: tone level changed by %.4f dB", c.from, c.to, d)
		}
		if c.from < c.to {
			continue
		}
		// Tones above the new Nyquist frequency: nothing comes out.
		for _, f := range []float64{0.5*fo + 50, 0.6 * fo, 0.45 * fs} {
			y := rs.Apply(nil, tone(n, f, fs, 1, 0.2))
			var p float64
			for _, v := range y[300 : len(y)-300] {
				p += v * v
			}
			p /= float64(len(y) - 600)
			if lvl := 10 * math.Log10(p/0.5); lvl > -80 {
				t.Errorf("%d → %d: tone at %v Hz leaks at %.1f dB", c.from, c.to, f, lvl)
			}
		}
	}
}

// ApplyAt on any block with its support gives Apply's samples exactly,
// at the signal's edges and inside it, for exact and interpolated plans.
func TestApplyAtMatchesApply(t *testing.T) {
	x := randn(9000, 11)
	for _, r := range []float64{3, 441.0 / 160, 0.75, 1.0317, 1} {
		rs := NewResampler(r)
		want := rs.Apply(nil, x)
		for _, b := range []struct{ m0, n int }{{0, 100}, {17, 1000}, {len(want) - 333, 333}, {1234, 1}, {0, len(want)}} {
			lo, hi := rs.Support(int64(b.m0), b.n)
			lo, hi = max(lo, 0), min(hi, int64(len(x)))
			got := make([]float64, b.n)
			rs.ApplyAt(got, x[lo:hi], lo, int64(b.m0))
			for i := range got {
				if got[i] != want[b.m0+i] {
					t.Fatalf("r %v block %v: output %d is %v, Apply gives %v", r, b, b.m0+i, got[i], want[b.m0+i])
				}
			}
		}
	}
}

// The low-pass keeps its passband within 0.01 dB and takes the stopband
// 80 dB down (the design rule shared with the resampler).
func TestLowPass(t *testing.T) {
	const fs = 48000.0
	lp := NewLowPass(19845/fs, 22050/fs)
	n := 8000
	for _, c := range []struct {
		f       float64
		stopped bool
	}{{1000, false}, {15000, false}, {19845, false}, {22050, true}, {23000, true}} {
		x := tone(n+2*lp.Half(), c.f, fs, 1, 0.4)
		y := make([]float64, n)
		lp.ApplyValid(y, x)
		// y[i] is centred on x[i+Half]: compare with the tone shifted by Half.
		amp, _ := fitTone(y, c.f, fs, 0, n)
		if c.stopped {
			if db(amp) > -80 {
				t.Errorf("%v Hz: %.1f dB, want ≤ −80", c.f, db(amp))
			}
			continue
		}
		if math.Abs(db(amp)) > 0.01 {
			t.Errorf("%v Hz: gain %.4f dB, want 0 ± 0.01", c.f, db(amp))
		}
		ref := tone(n+lp.Half(), c.f, fs, 1, 0.4)[lp.Half():]
		var e float64
		for i := range y {
			e = math.Max(e, math.Abs(y[i]-ref[i]))
		}
		if e > 2e-3 {
			t.Errorf("%v Hz: output differs from the delayed-free tone by %.2g", c.f, e)
		}
	}
}

// Converting 10 s of a 48 kHz recording to 16 kHz (the exact 1/3 plan),
// clip-sized blocks through ApplyAt as the ingest path does.
func BenchmarkResample48kTo16kPer10s(b *testing.B) {
	x := randn(480000, 3)
	rs := NewResampler(3)
	dst := make([]float64, 160000)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		rs.ApplyAt(dst, x, 0, 0)
	}
}
