package augment

import (
	"math"
	"testing"
)

// RBJ cookbook coefficients at fs 48 kHz, f0 1 kHz, Q 1/√2, evaluated in
// double precision from R. Bristow-Johnson, "Cookbook formulae for audio
// equalizer biquad filter coefficients" (W3C Audio WG Note, 2021).
func TestRBJCoefficients(t *testing.T) {
	q := 1 / math.Sqrt2
	for _, c := range []struct {
		name string
		got  Biquad
		b    [3]float64
	}{
		{"LPF", LowPass(48000, 1000, q), [3]float64{0.0039161267, 0.0078322533, 0.0039161267}},
		{"HPF", HighPass(48000, 1000, q), [3]float64{0.9115866680, -1.8231733360, 0.9115866680}},
	} {
		got := [5]float64{c.got.B0, c.got.B1, c.got.B2, c.got.A1, c.got.A2}
		want := [5]float64{c.b[0], c.b[1], c.b[2], -1.8153410827, 0.8310055893}
		for i := range got {
			if math.Abs(got[i]-want[i]) > 1e-10 {
				t.Errorf("%s coefficient %d = %.10f, want %.10f", c.name, i, got[i], want[i])
			}
		}
	}
}

func cascadeDB(secs []Biquad, f, fs float64) float64 {
	m := 1.0
	for i := range secs {
		m *= secs[i].mag(2 * math.Pi * f / fs)
	}
	return db(m)
}

// −3.0103 dB (= 10·log10 ½) at the cutoff: RBJ low/high-pass with
// Q = 1/√2 (Bristow-Johnson cookbook) and Butterworth of any order
// (Butterworth 1930: |H|² = 1/(1 + (ω/ωc)^2N)).
func TestCutoffMinus3dB(t *testing.T) {
	const want = -3.0103
	for _, fs := range []float64{16000, 48000} {
		for _, fc := range []float64{100, 1000, 5000} {
			q := 1 / math.Sqrt2
			cases := map[string][]Biquad{
				"rbj-lp": {LowPass(fs, fc, q)},
				"rbj-hp": {HighPass(fs, fc, q)},
			}
			for n := 1; n <= 8; n++ {
				cases["bw-lp"+string(rune('0'+n))] = Butterworth(fs, fc, n, false)
				cases["bw-hp"+string(rune('0'+n))] = Butterworth(fs, fc, n, true)
			}
			for name, secs := range cases {
				if got := cascadeDB(secs, fc, fs); math.Abs(got-want) > 1e-4 {
					t.Errorf("fs %v fc %v %s: %.5f dB at fc, want %.4f", fs, fc, name, got, want)
				}
			}
		}
	}
}

// Far below the Nyquist frequency the bilinear Butterworth follows the
// analog magnitude 1/√(1 + (f/fc)^2N) (Butterworth 1930).
func TestButterworthSkirt(t *testing.T) {
	const fs, fc = 48000.0, 100.0
	for n := 1; n <= 6; n++ {
		for _, f := range []float64{30, 300, 1000} {
			want := -10 * math.Log10(1+math.Pow(f/fc, 2*float64(n)))
			got := cascadeDB(Butterworth(fs, fc, n, false), f, fs)
			if math.Abs(got-want) > 0.05*float64(n) {
				t.Errorf("order %d at %v Hz: %.3f dB, want %.3f", n, f, got, want)
			}
		}
	}
}

// A tone through Cascade comes out at the designed gain, in place or not.
func TestFilterApply(t *testing.T) {
	const fs = 16000.0
	for _, c := range []struct {
		f       Filter
		freq    float64
		wantDB  float64
		tolDB   float64
		comment string
	}{
		{Filter{Type: "lowpass", High: 1000}, 1000, -3.0103, 0.01, "RBJ cutoff"},
		{Filter{Type: "highpass", Low: 500, Order: 4}, 500, -3.0103, 0.01, "Butterworth cutoff"},
		{Filter{Type: "bandpass", Low: 500, High: 2000}, 1000, 0, 0.01, "RBJ BPF constant 0 dB peak"},
		{Filter{Type: "bandpass", Low: 500, High: 2000}, 500, -3.0103, 0.05, "band edge, exact by prewarping both edges"},
		{Filter{Type: "bandpass", Low: 500, High: 2000}, 2000, -3.0103, 0.05, "RBJ BPF band edge"},
		{Filter{Type: "bandpass", Low: 200, High: 5000, Order: 3}, 200, -3.0103, 0.05, "Butterworth HP edge"},
		{Filter{Type: "bandpass", Low: 200, High: 5000, Order: 3}, 5000, -3.0103, 0.05, "Butterworth LP edge"},
		{Filter{Type: "telephone"}, 1000, 0, 0.05, "mid-band of 300–3400 Hz (ITU-T P.310)"},
		{Filter{Type: "telephone"}, TelephoneLow, -3.0103, 0.05, "band edge"},
		{Filter{Type: "telephone"}, TelephoneHigh, -3.0103, 0.05, "band edge"},
		{Filter{Type: "telephone"}, 100, -38.2, 0.2, "order-4 skirt, −10·log10(1+(300/100)^8)"},
	} {
		x := tone(16000, c.freq, fs, 1, 0)
		y := c.f.Apply(nil, x, fs)
		amp, _ := fitTone(y, c.freq, fs, 8000, 16000)
		if got := db(amp); math.Abs(got-c.wantDB) > c.tolDB {
			t.Errorf("%+v at %v Hz (%s): %.3f dB, want %.3f", c.f, c.freq, c.comment, got, c.wantDB)
		}
		in := append([]float64(nil), x...)
		in = c.f.Apply(in, in, fs)
		for i := range in {
			if in[i] != y[i] {
				t.Fatalf("%+v: in-place result differs at %d", c.f, i)
			}
		}
	}
}

func TestFilterDesignErrors(t *testing.T) {
	for _, f := range []Filter{
		{Type: "lowpass", High: 9000},
		{Type: "lowpass"},
		{Type: "highpass", Low: -1},
		{Type: "bandpass", Low: 2000, High: 1000},
		{Type: "notch", Low: 100},
	} {
		if _, err := f.Design(16000); err == nil {
			t.Errorf("%+v: no error", f)
		}
	}
}
