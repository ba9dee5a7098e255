package augment

import (
	"math"
	"math/rand/v2"
	"testing"
)

// Welch PSD slopes over 2.5 decades: white 0, pink −3.0103 and brown
// −6.0206 dB/octave (10·log10 2 and 20·log10 2; the definitions of 1/f and
// 1/f² noise, e.g. Kasdin 1995), within ±0.3 dB/octave.
func TestNoiseSlopes(t *testing.T) {
	for _, fs := range []float64{16000, 48000} {
		for _, c := range []struct {
			colour string
			slope  float64
		}{{White, 0}, {Pink, -3.0103}, {Brown, -6.0206}} {
			x, err := Coloured(make([]float64, int(8*fs)), c.colour, fs, rand.New(rand.NewPCG(11, 12)))
			if err != nil {
				t.Fatal(err)
			}
			psd, df := welch(x, fs, 8192)
			hi := fs / 8 // brown: the integrator departs from 1/f² towards fs/2
			got := slopePerOctave(psd, df, hi/math.Pow(10, 2.5), hi)
			t.Logf("fs %v %s: %.3f dB/octave", fs, c.colour, got)
			if math.Abs(got-c.slope) > 0.3 {
				t.Errorf("fs %v %s: slope %.3f dB/octave, want %.4f", fs, c.colour, got, c.slope)
			}
			if ms := Power(x, fs, WeightNone); math.Abs(ms-1) > 1e-9 {
				t.Errorf("%s: mean square %v, want 1", c.colour, ms)
			}
		}
	}
	if _, err := Coloured(make([]float64, 10), "blue", 16000, rand.New(rand.NewPCG(1, 1))); err == nil {
		t.Error("unknown colour: no error")
	}
}
