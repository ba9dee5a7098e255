package augment

import (
	"math"
	"testing"
)

// Tempo keeps the lines and changes the duration; Pitch moves the lines by
// 2^(cents/1200) (equal-tempered cent, 1200 per octave) and keeps the
// duration.
func TestTempoPitch(t *testing.T) {
	const fs = 16000.0
	x := tone(16000, 440, fs, 0.5, 0)
	for _, a := range []float64{0.8, 0.95, 1.05, 1.25} {
		y := Tempo{Factor: a}.Apply(nil, x, fs)
		if want := int(math.Round(16000 / a)); len(y) != want {
			t.Errorf("tempo %v: len %d, want %d", a, len(y), want)
		}
		if f := peakFreq(t, y, fs, 300, 600); math.Abs(f-440) > 0.5 {
			t.Errorf("tempo %v: line at %.2f Hz, want 440", a, f)
		}
		amp, _ := fitTone(y, 440, fs, 1000, len(y)-1000)
		if math.Abs(db(amp/0.5)) > 0.5 {
			t.Errorf("tempo %v: level %.2f dB", a, db(amp/0.5))
		}
	}
	for _, cents := range []float64{-100, 50, 200} {
		y := Pitch{Cents: cents}.Apply(nil, x, fs)
		if len(y) != len(x) {
			t.Errorf("pitch %v: len %d", cents, len(y))
		}
		want := 440 * math.Pow(2, cents/1200)
		if f := peakFreq(t, y, fs, 300, 700); math.Abs(f-want) > 0.5 {
			t.Errorf("pitch %v: line at %.2f Hz, want %.2f", cents, f, want)
		}
	}
}

func TestNonphysical(t *testing.T) {
	for _, c := range []struct {
		t    Transform
		want bool
	}{
		{Tempo{Factor: 1.1}, true}, {&Pitch{}, true}, {Pitch{}, true},
		{Speed{Ratio: 1.1}, false}, {Gain{}, false}, {Noise{}, false},
	} {
		if got := Nonphysical(c.t); got != c.want {
			t.Errorf("Nonphysical(%T) = %v", c.t, got)
		}
	}
}
