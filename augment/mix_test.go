package augment

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"
)

func randn(n int, seed uint64) []float64 {
	rng := rand.New(rand.NewPCG(seed, 7))
	x := make([]float64, n)
	for i := range x {
		x[i] = rng.NormFloat64()
	}
	return x
}

func diff(y, x []float64) []float64 {
	d := make([]float64, len(x))
	for i := range d {
		d[i] = y[i] - x[i]
	}
	return d
}

// g = √(Ps/(Pn·10^(SNR/10))): a unit-amplitude sine (Ps = ½) over
// unit-variance noise at 10 dB needs g = √0.05 = 0.2236068 (follows from
// SNR_dB = 10·log10(Ps/Pn); common practice).
func TestNoiseGain(t *testing.T) {
	if g := NoiseGain(0.5, 1, 10); math.Abs(g-0.2236068) > 1e-7 {
		t.Errorf("NoiseGain = %v, want 0.2236068", g)
	}
}

// Re-measuring a mix gives the target SNR within 0.1 dB, also after
// Protect scales the whole mix.
func TestMixRemeasure(t *testing.T) {
	const fs = 16000.0
	sig := tone(16000, 440, fs, 0.3, 0)
	for i, v := range randn(16000, 3) {
		sig[i] += 0.01 * v
	}
	for _, w := range []Weighting{WeightNone, WeightA} {
		for _, snr := range []float64{-10, -6, 0, 6, 20, 40} {
			noise := randn(20000, uint64(10+snr))
			g, y, err := Mix(nil, sig, noise, fs, snr, w)
			if err != nil {
				t.Fatal(err)
			}
			if got := SNR(sig, diff(y, sig), fs, w); math.Abs(got-snr) > 0.1 {
				t.Errorf("%v %v dB: re-measured %.4f dB (g %v)", w, snr, got, g)
			}
			k := Protect(y)
			if peak := maxAbs(y); peak > Ceiling {
				t.Errorf("peak %v after Protect", peak)
			}
			s2 := append([]float64(nil), sig...)
			Gain{DB: db(k)}.Apply(s2, s2, fs)
			if got := SNR(s2, diff(y, s2), fs, w); math.Abs(got-snr) > 0.1 {
				t.Errorf("%v %v dB after Protect(%.3f): %.4f dB", w, snr, k, got)
			}
		}
	}
}

func maxAbs(x []float64) float64 {
	var m float64
	for _, v := range x {
		m = math.Max(m, math.Abs(v))
	}
	return m
}

func TestMixErrors(t *testing.T) {
	x := tone(100, 440, 16000, 1, 0)
	if _, _, err := Mix(nil, x, make([]float64, 100), 16000, 10, WeightNone); !errors.Is(err, ErrSilent) {
		t.Errorf("silent noise: %v", err)
	}
	if _, _, err := Mix(nil, make([]float64, 100), x, 16000, 10, WeightNone); !errors.Is(err, ErrSilent) {
		t.Errorf("silent signal: %v", err)
	}
	if _, _, err := Mix(nil, x, x, 16000, math.NaN(), WeightNone); err == nil {
		t.Error("NaN target: no error")
	}
	defer func() {
		if recover() == nil {
			t.Error("short noise: no panic")
		}
	}()
	Mix(nil, x, x[:50], 16000, 0, WeightNone)
}

func TestProtect(t *testing.T) {
	x := []float64{0.5, -2, 1}
	if k := Protect(x); math.Abs(k-Ceiling/2) > 1e-15 || maxAbs(x) > Ceiling {
		t.Errorf("Protect = %v, peak %v", k, maxAbs(x))
	}
	y := []float64{0.5, -0.9}
	if k := Protect(y); k != 1 || y[1] != -0.9 {
		t.Errorf("Protect of a fitting clip = %v, %v", k, y)
	}
}

func TestNoiseAndBackgroundSNR(t *testing.T) {
	const fs = 16000.0
	x := tone(16000, 300, fs, 0.2, 0)
	bg := SynthPlantNoise(make([]float64, 5000), fs, rand.New(rand.NewPCG(5, 5)))
	for _, w := range []Weighting{WeightNone, WeightA} {
		for _, c := range []string{White, Pink, Brown} {
			n := Noise{Colour: c, SNR: 3, Weighting: w, Rand: rand.New(rand.NewPCG(1, 1))}
			y := n.Apply(nil, x, fs)
			if got := SNR(x, diff(y, x), fs, w); math.Abs(got-3) > 0.1 {
				t.Errorf("noise %s %v: %.3f dB", c, w, got)
			}
			n.Rand = rand.New(rand.NewPCG(1, 1))
			y2 := n.Apply(nil, x, fs)
			for i := range y {
				if y[i] != y2[i] {
					t.Fatalf("noise %s not deterministic", c)
				}
			}
		}
		b := Background{Source: bg, SNR: -6, Weighting: w, Offset: 1234, CrossfadeSeconds: 0.05}
		y := b.Apply(nil, x, fs)
		if got := SNR(x, diff(y, x), fs, w); math.Abs(got+6) > 0.1 {
			t.Errorf("background %v: %.3f dB", w, got)
		}
	}
}

// The looped background follows the source exactly outside the
// crossfades, and the equal-power crossfade keeps the level of
// uncorrelated material.
func TestBackgroundLoop(t *testing.T) {
	const fs = 1000.0
	src := randn(1000, 9)
	b := Background{Source: src, Offset: 900, CrossfadeSeconds: 0.1}
	fade, period := 100, 900
	y := b.Loop(make([]float64, 20000), fs)
	for i, v := range y {
		tt := 900 + i
		u := tt % period
		if u >= fade && v != src[u] {
			t.Fatalf("sample %d: %v, want source[%d] = %v", i, v, u, src[u])
		}
	}
	var pf, pa float64
	nf := 0
	for i, v := range y {
		if (900+i)%period < fade {
			pf += v * v
			nf++
		}
		pa += v * v
	}
	ratio := 10 * math.Log10((pf/float64(nf))/(pa/float64(len(y))))
	if math.Abs(ratio) > 0.5 {
		t.Errorf("crossfade level %.2f dB re the whole loop, want ≈ 0", ratio)
	}
	short := Background{Source: src, Offset: 10}.Loop(make([]float64, 50), fs)
	for i, v := range short {
		if v != src[10+i] {
			t.Fatalf("no-loop read differs at %d", i)
		}
	}
}

// The synthetic plant floor is deterministic, at −20 dBFS RMS, and carries
// mains hum: its 100 Hz line stands well above the broadband around it.
func TestSynthPlantNoise(t *testing.T) {
	const fs = 16000.0
	a := SynthPlantNoise(make([]float64, 4*16000), fs, rand.New(rand.NewPCG(3, 4)))
	b := SynthPlantNoise(make([]float64, 4*16000), fs, rand.New(rand.NewPCG(3, 4)))
	for i := range a {
		if a[i] != b[i] {
			t.Fatal("not deterministic")
		}
	}
	if rms := math.Sqrt(Power(a, fs, WeightNone)); math.Abs(rms-0.1) > 1e-9 {
		t.Errorf("RMS %v, want 0.1", rms)
	}
	psd, df := welch(a, fs, 8192)
	for _, f := range []float64{50, 100, 150} {
		k := int(math.Round(f / df))
		line := math.Max(psd[k-1], math.Max(psd[k], psd[k+1]))
		var around float64
		for j := k + 10; j < k+30; j++ {
			around += psd[j] / 20
		}
		if r := 10 * math.Log10(line/around); r < 6 {
			t.Errorf("%v Hz line only %.1f dB above the floor", f, r)
		}
	}
}
