package dsp

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"
)

func TestKaiserBeta(t *testing.T) {
	for _, c := range []struct{ att, beta, tol float64 }{
		// 65 dB → 6.20426: scipy.signal.kaiser_beta documentation example,
		// from Oppenheim & Schafer 1999 Eq. (7.62).
		{65, 6.20426, 1e-5},
		// 40 dB → 3.39532: middle branch of Oppenheim & Schafer Eq. (7.62),
		// evaluated in double precision (computed).
		{40, 3.39532, 1e-5},
		{10, 0, 0}, // below 21 dB the window is rectangular (Kaiser 1974)
	} {
		if got := KaiserBeta(c.att); math.Abs(got-c.beta) > c.tol {
			t.Errorf("KaiserBeta(%v) = %v, want %v", c.att, got, c.beta)
		}
	}
}

func TestBesselI0(t *testing.T) {
	for _, c := range []struct{ x, want float64 }{
		// Abramowitz & Stegun, Handbook of Mathematical Functions, Table 9.8
		// (from memory).
		{0, 1},
		{1, 1.2660658777520082},
		{5, 27.239871823604442},
		{10, 2815.716628466254},
	} {
		if got := besselI0(c.x); math.Abs(got-c.want) > 1e-12*c.want {
			t.Errorf("I0(%v) = %.16g, want %.16g", c.x, got, c.want)
		}
	}
}

var testRatios = []float64{1.03, 0.97, 1.25, 0.8, 100.0 / 103, 1.0317, math.Sqrt2 / 1.4}

func TestSpeedLength(t *testing.T) {
	for _, r := range testRatios {
		rs := NewResampler(r)
		for n := 0; n < 300; n += 7 {
			want := int(math.Round(float64(n) / r))
			if got := len(rs.Apply(nil, make([]float64, n))); got != want {
				t.Errorf("r %v n %d: len %d, want round(n/r) = %d", r, n, got, want)
			}
		}
	}
}

// A speed change by r moves every line by exactly r (bandlimited
// resampling; Smith, Digital Audio Resampling Home Page).
func TestSpeedMovesLines(t *testing.T) {
	const fs = 16000.0
	for _, r := range testRatios {
		for _, f := range []float64{1000, 3210.5} {
			x := tone(16000, f, fs, 0.5, 0.3)
			y := NewResampler(r).Apply(nil, x)
			got := peakFreq(t, y, fs, f*r-50, f*r+50)
			if math.Abs(got-f*r) > 1e-5*f*r {
				t.Errorf("r %v: tone %v Hz went to %.5f Hz, want %.5f", r, f, got, f*r)
			}
		}
	}
}

// lowerNyquist returns the lower Nyquist frequency of the conversion,
// expressed as an input frequency.
func lowerNyquist(r, fs float64) float64 { return fs / 2 * math.Min(1, 1/r) }

func TestSpeedPassband(t *testing.T) {
	const fs, n = 16000.0, 8000
	for _, r := range testRatios {
		rs := NewResampler(r)
		edge := passEdge * lowerNyquist(r, fs)
		worst := 0.0
		for f := 20.0; f <= edge; f += edge / 37 {
			y := rs.Apply(nil, tone(n, f, fs, 1, 0.1))
			amp, _ := fitTone(y, f*r, fs, 300, len(y)-300)
			worst = math.Max(worst, math.Abs(db(amp)))
		}
		y := rs.Apply(nil, tone(n, edge, fs, 1, 0.1))
		amp, _ := fitTone(y, edge*r, fs, 300, len(y)-300)
		worst = math.Max(worst, math.Abs(db(amp)))
		t.Logf("r %v: passband ripple %.5f dB", r, worst)
		if worst > 0.01 {
			t.Errorf("r %v: passband ripple %.4f dB, want ≤ 0.01", r, worst)
		}
	}
}

// Tones above the new Nyquist frequency would alias; they must come out at
// least 80 dB down. For slow-downs the same test catches imaging: all that
// remains after removing the moved tone must be 80 dB down.
func TestSpeedAliasing(t *testing.T) {
	const fs, n = 16000.0, 8000
	for _, r := range testRatios {
		rs := NewResampler(r)
		nyq := lowerNyquist(r, fs)
		worst := math.Inf(-1)
		for f := nyq; f < 0.499*fs; f += (0.499*fs - nyq) / 23 {
			if r < 1 {
				break
			}
			y := rs.Apply(nil, tone(n, f, fs, 1, 0.2))
			var p float64
			for _, v := range y[300 : len(y)-300] {
				p += v * v
			}
			p /= float64(len(y) - 600)
			worst = math.Max(worst, 10*math.Log10(p/0.5))
		}
		// Residual after the expected tone, for in-band tones near the edge.
		for _, f := range []float64{0.5 * nyq, 0.85 * nyq, passEdge * nyq} {
			y := rs.Apply(nil, tone(n, f, fs, 1, 0.2))
			_, res := fitTone(y, f*r, fs, 300, len(y)-300)
			worst = math.Max(worst, 10*math.Log10(res/0.5))
		}
		t.Logf("r %v: worst alias/image %.1f dB", r, worst)
		if worst > -80 {
			t.Errorf("r %v: alias/image level %.1f dB, want ≤ −80", r, worst)
		}
	}
}

// The grouped kernels and the single-output path give bit-identical
// results, so output never depends on where a sample falls in a block (the
// dot kernels' own assembly-versus-portable check is in machine/dsp).
func TestSpeedBitIdentical(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	x := make([]float64, 5000)
	for i := range x {
		x[i] = rng.NormFloat64()
	}
	for _, r := range testRatios {
		rs := NewResampler(r)
		y := rs.Apply(nil, x)
		for m := range y {
			if v := rs.one(x, m); v != y[m] {
				t.Fatalf("r %v: output %d grouped %v, single %v", r, m, y[m], v)
			}
		}
	}
}

// The exact-phase kernel works in float32; against the same kernel summed
// in float64 its error must stay far below the 80 dB stopband: 120 dB
// under the signal's RMS (a float32 sum of ~100 products is good to about
// 2^-24·√100, −130 dB; common practice).
func TestSpeedFloat32Error(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	x := make([]float64, 20000)
	for i := range x {
		x[i] = 0.1 * rng.NormFloat64()
	}
	for _, r := range []float64{1.03, 0.97, 1.25} {
		rs := NewResampler(r)
		y := rs.Apply(nil, x)
		var e, p float64
		for m := range y {
			start, _, _ := rs.locate(m)
			row := m % rs.q
			ref := dotEdge(rs.table[row*rs.taps:(row+1)*rs.taps], x, start)
			e += (y[m] - ref) * (y[m] - ref)
			p += ref * ref
		}
		if lvl := 10 * math.Log10(e/p); lvl > -120 {
			t.Errorf("r %v: float32 error %.1f dB re signal, want ≤ −120", r, lvl)
		} else {
			t.Logf("r %v: float32 error %.1f dB re signal", r, lvl)
		}
	}
}

func TestSpeedPlans(t *testing.T) {
	var p Plans
	if p.Resampler(1.03) != p.Resampler(1.03) {
		t.Error("plan not cached")
	}
	x := tone(1000, 440, 16000, 0.5, 0)
	a := NewResampler(1.03).Apply(nil, x)
	b := p.Resampler(1.03).Apply(nil, x)
	if fmt.Sprint(a) != fmt.Sprint(b) {
		t.Error("cached plan gives a different result")
	}
}

func TestSpeedPanics(t *testing.T) {
	for _, r := range []float64{0, -1, math.Inf(1), math.NaN()} {
		func() {
			defer func() {
				if recover() == nil {
					t.Errorf("ratio %v: no panic", r)
				}
			}()
			NewResampler(r)
		}()
	}
}

func TestSpeedIdentity(t *testing.T) {
	x := randn(1000, 4)
	y := NewResampler(1).Apply(nil, x)
	for i := range x {
		if y[i] != x[i] {
			t.Fatalf("ratio 1 changed sample %d", i)
		}
	}
}

// One Plans and its plans serve several goroutines (run with -race).
func TestPlansConcurrent(t *testing.T) {
	var p Plans
	x := randn(4000, 2)
	want := NewResampler(1.02).Apply(nil, x)
	done := make(chan []float64)
	for g := 0; g < 4; g++ {
		go func() { done <- p.Resampler(1.02).Apply(nil, x) }()
	}
	for g := 0; g < 4; g++ {
		y := <-done
		for i := range y {
			if y[i] != want[i] {
				t.Fatal("concurrent result differs")
			}
		}
	}
}
