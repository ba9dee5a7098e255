package augment

import (
	"math"
	"testing"
)

// IEC 61672-1:2013 Table 3: nominal band n (exact frequency 1000·10^(n/10)
// Hz), A-weighting design goal (dB), class 1 acceptance limits (dB). calc
// is Eq. (E.6) of IEC 61672-1:2013 Annex E at the exact frequency, rounded
// to 0.01 dB (computed in double precision).
var aTable = []struct {
	n           int
	a, calc     float64
	plus, minus float64 // class 1 limits; minus is the allowed negative deviation
}{
	{-20, -70.4, -70.44, 3.0, math.Inf(1)},
	{-19, -63.4, -63.38, 2.5, math.Inf(1)},
	{-18, -56.7, -56.69, 2.0, 4.0},
	{-17, -50.5, -50.46, 2.0, 2.0},
	{-16, -44.7, -44.71, 2.0, 1.5},
	{-15, -39.4, -39.44, 1.5, 1.5},
	{-14, -34.6, -34.63, 1.0, 1.0},
	{-13, -30.2, -30.23, 1.0, 1.0},
	{-12, -26.2, -26.20, 1.0, 1.0},
	{-11, -22.5, -22.51, 1.0, 1.0},
	{-10, -19.1, -19.15, 1.0, 1.0},
	{-9, -16.1, -16.10, 1.0, 1.0},
	{-8, -13.4, -13.35, 1.0, 1.0},
	{-7, -10.9, -10.87, 1.0, 1.0},
	{-6, -8.6, -8.63, 1.0, 1.0},
	{-5, -6.6, -6.61, 1.0, 1.0},
	{-4, -4.8, -4.81, 1.0, 1.0},
	{-3, -3.2, -3.23, 1.0, 1.0},
	{-2, -1.9, -1.90, 1.0, 1.0},
	{-1, -0.8, -0.82, 1.0, 1.0},
	{0, 0.0, 0.00, 0.7, 0.7},
	{1, 0.6, 0.59, 1.0, 1.0},
	{2, 1.0, 0.98, 1.0, 1.0},
	{3, 1.2, 1.20, 1.0, 1.0},
	{4, 1.3, 1.27, 1.0, 1.0},
	{5, 1.2, 1.20, 1.0, 1.0},
	{6, 1.0, 0.97, 1.0, 1.0},
	{7, 0.5, 0.55, 1.5, 1.5},
	{8, -0.1, -0.12, 1.5, 2.0},
	{9, -1.1, -1.11, 1.5, 2.5},
	{10, -2.5, -2.49, 2.0, 3.0},
	{11, -4.3, -4.32, 2.0, 5.0},
	{12, -6.6, -6.60, 2.5, 16.0},
	{13, -9.3, -9.32, 3.0, math.Inf(1)},
}

func exactBand(n int) float64 { return 1000 * math.Pow(10, float64(n)/10) }

func TestAWeightAnalytic(t *testing.T) {
	for _, r := range aTable {
		f := exactBand(r.n)
		got := AWeightDB(f)
		if math.Abs(got-r.calc) > 0.01 {
			t.Errorf("A(%.1f Hz) = %.3f dB, want %.2f (Eq. E.6)", f, got, r.calc)
		}
		// Rounded to 0.1 dB it is the Table 3 value.
		if math.Abs(math.Round(got*10)/10-r.a) > 1e-9 {
			t.Errorf("A(%.1f Hz) = %.3f dB rounds away from Table 3's %.1f", f, got, r.a)
		}
	}
}

// The digital filter meets the class 1 acceptance limits of IEC
// 61672-1:2013 Table 3 at every table frequency up to 0.45·fs.
func TestAWeightDigitalClass1(t *testing.T) {
	for _, fs := range []float64{8000, 16000, 22050, 44100, 48000, 96000} {
		af := newAFilter(fs)
		worst := 0.0
		for _, r := range aTable {
			f := exactBand(r.n)
			if f > 0.45*fs {
				continue
			}
			dev := db(af.mag(f, fs)) - r.a
			if dev > r.plus || -dev > r.minus {
				t.Errorf("fs %v: %.1f Hz deviates %+.2f dB from %.1f, limits +%.1f/−%.1f", fs, f, dev, r.a, r.plus, r.minus)
			}
			if d := math.Abs(db(af.mag(f, fs)) - AWeightDB(f)); d > worst {
				worst = d
			}
		}
		t.Logf("fs %v: largest deviation from Eq. (E.6) up to 0.45·fs: %.3f dB", fs, worst)
	}
}

// Power with WeightA on a steady tone is the tone's power times the
// filter's squared magnitude.
func TestPowerAWeighted(t *testing.T) {
	for _, fs := range []float64{16000, 48000} {
		for _, f := range []float64{100, 1000, 4000} {
			x := tone(int(2*fs), f, fs, 1, 0.4)
			got := 10 * math.Log10(Power(x, fs, WeightA)/Power(x, fs, WeightNone))
			want := db(newAFilter(fs).mag(f, fs))
			if math.Abs(got-want) > 0.02 {
				t.Errorf("fs %v, %v Hz: weighted/unweighted %.3f dB, filter %.3f dB", fs, f, got, want)
			}
		}
	}
	// A 1 kHz sine of amplitude 1 has mean square ½ (0 dB weighting there).
	if p := Power(tone(48000, 1000, 48000, 1, 0), 48000, WeightA); math.Abs(10*math.Log10(p/0.5)) > 0.01 {
		t.Errorf("1 kHz A-weighted power %v, want 0.5", p)
	}
}

func TestParseWeighting(t *testing.T) {
	for s, want := range map[string]Weighting{"": WeightNone, "none": WeightNone, "A": WeightA, "a": WeightA} {
		if got, err := ParseWeighting(s); err != nil || got != want {
			t.Errorf("ParseWeighting(%q) = %v, %v", s, got, err)
		}
	}
	if _, err := ParseWeighting("C"); err == nil {
		t.Error("ParseWeighting(C): no error")
	}
}

// power equals the plain definition: filter the extended sequence
// (reversed warm-up, clip, reflected tail) from zero state, keep the
// outputs aligned with the clip after the settling time, take their mean
// square.
func TestAPowerMatchesReference(t *testing.T) {
	const fs = 16000.0
	for _, n := range []int{1, 2, 13, 1000, 1037, 5000, 3200, 20000} {
		x := randn(n, uint64(n))
		af := newAFilter(fs)
		warm := min(n-1, int(aWarmSeconds*fs))
		var ext []float64
		for i := warm; i >= 1; i-- {
			ext = append(ext, x[i])
		}
		ext = append(ext, x...)
		for i := 0; i < aFIRHalf; i++ {
			if k := n - 2 - i; k >= 0 {
				ext = append(ext, x[k])
			} else {
				ext = append(ext, 0)
			}
		}
		v := Cascade(nil, ext, af.hp[:])
		skip := aSkip(n, fs)
		var sum float64
		for e := warm + skip; e < warm+n; e++ {
			var y float64
			for k, c := range af.fir {
				if j := e + aFIRHalf - k; j >= 0 && j < len(v) {
					y += c * v[j]
				}
			}
			sum += y * y
		}
		want := sum / float64(n-skip)
		if got := af.power(x, fs); math.Abs(got-want) > 1e-12*want {
			t.Errorf("n %d: power %v, reference %v", n, got, want)
		}
	}
}

// A steady tone reads its A-weighting within the class 1 acceptance limits
// of IEC 61672-1:2013 Table 3 whatever its phase, from 10 Hz up: the
// measurement starts after the filter's settling time, not on the start-up
// transient (which read a 10 Hz cosine up to +8.7 dB high, the limit
// there being +3.0 dB).
func TestAWeightedToneAnyPhase(t *testing.T) {
	for _, tc := range []struct {
		fs, seconds, fmax float64
	}{
		{16000, 1.5, 0.45 * 16000},
		{48000, 1, 1000},
	} {
		for _, r := range aTable {
			f := exactBand(r.n)
			if f > tc.fmax {
				continue
			}
			for k := range 6 {
				ph := float64(k) * math.Pi / 6
				x := tone(int(tc.seconds*tc.fs), f, tc.fs, 1, ph)
				dev := 10*math.Log10(Power(x, tc.fs, WeightA)/Power(x, tc.fs, WeightNone)) - r.a
				if dev > r.plus || -dev > r.minus {
					t.Errorf("fs %v, %.2f Hz, phase %.2f rad: reads %+.2f dB from Table 3's %.1f dB, class 1 allows +%.1f/−%.1f",
						tc.fs, f, ph, dev, r.a, r.plus, r.minus)
				}
			}
		}
	}
}
