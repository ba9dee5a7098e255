package features

import (
	"math"
	"testing"
)

func TestMelScales(t *testing.T) {
	// Values computed from the published formulas: HTK m = 2595·log10(1 + f/700)
	// (O'Shaughnessy 1987, p. 150); Slaney linear below 1 kHz at 200/3 Hz per
	// mel and a step of 6.4^(1/27) above (Slaney 1998, Auditory Toolbox v2).
	tests := []struct {
		scale string
		hz    float64
		mel   float64
		tol   float64
	}{
		{ScaleHTK, 200, 283.23, 0.005},
		{ScaleHTK, 500, 607.45, 0.005},
		{ScaleHTK, 1000, 999.99, 0.005},
		{ScaleHTK, 2000, 1521.36, 0.005},
		{ScaleHTK, 4000, 2146.06, 0.005},
		{ScaleHTK, 8000, 2840.02, 0.005},
		{ScaleSlaney, 200, 3.0, 1e-12},
		{ScaleSlaney, 500, 7.5, 1e-12},
		{ScaleSlaney, 1000, 15, 1e-12},
		{ScaleSlaney, 2000, 25.082, 0.0005},
		{ScaleSlaney, 4000, 35.164, 0.0005},
		{ScaleSlaney, 6400, 42, 1e-9},
		{ScaleSlaney, 8000, 45.246, 0.0005},
	}
	for _, tc := range tests {
		toMel, toHz, err := MelFuncs(tc.scale)
		if err != nil {
			t.Fatal(err)
		}
		if m := toMel(tc.hz); math.Abs(m-tc.mel) > tc.tol {
			t.Errorf("%s: %v Hz → %v mel, want %v ± %v", tc.scale, tc.hz, m, tc.mel, tc.tol)
		}
		if f := toHz(toMel(tc.hz)); math.Abs(f-tc.hz) > 1e-9*tc.hz {
			t.Errorf("%s: round trip of %v Hz gives %v", tc.scale, tc.hz, f)
		}
	}
	if _, _, err := MelFuncs("bark"); err == nil {
		t.Error("unknown scale accepted")
	}
}

func TestFilterbankShape(t *testing.T) {
	const fs = 16000
	for _, scale := range []string{ScaleHTK, ScaleSlaney} {
		for _, norm := range []string{NormPeak, NormArea} {
			cfg := Config{Bands: 40, Scale: scale, Norm: norm, FMin: 50, FMax: 7000}
			fb, err := NewFilterbank(cfg, fs)
			if err != nil {
				t.Fatal(err)
			}
			binHz := fs / 1024.0
			dense := fb.Dense()
			for b := range fb.Bands {
				lo, hi := fb.Edges[b], fb.Edges[b+2]
				for k := range fb.Bins {
					w := dense[b*fb.Bins+k]
					f := float64(k) * binHz
					if w < 0 || (w > 0 && (f <= lo || f >= hi)) {
						t.Fatalf("%s/%s band %d bin %d (%v Hz, edges %v..%v): weight %v", scale, norm, b, k, f, lo, hi, w)
					}
					if (k < fb.Start[b] || k >= fb.Stop[b]) && w != 0 {
						t.Fatalf("band %d: weight outside sparse support", b)
					}
				}
				peak := 0.0
				for _, w := range fb.Weights(b) {
					peak = math.Max(peak, w)
				}
				// A triangle's peak is 1 (unit peak) or 2/(hi − lo) (unit area,
				// Slaney 1998); sampling at bins can only miss the apex.
				want := 1.0
				if norm == NormArea {
					want = 2 / (hi - lo)
				}
				if peak > want*(1+1e-12) || peak < 0.5*want {
					t.Errorf("%s/%s band %d: peak weight %v, want ≤ %v", scale, norm, b, peak, want)
				}
			}
			// Adjacent triangles share edges, so unit-peak weights sum to 1
			// between the first and last centre (common practice).
			if norm == NormPeak {
				for k := range fb.Bins {
					f := float64(k) * binHz
					if f <= fb.CentreHz(0) || f >= fb.CentreHz(fb.Bands-1) {
						continue
					}
					var sum float64
					for b := range fb.Bands {
						sum += dense[b*fb.Bins+k]
					}
					if math.Abs(sum-1) > 1e-9 {
						t.Errorf("%s: weights at %v Hz sum to %v", scale, f, sum)
					}
				}
			}
		}
	}
}

func TestConfigErrors(t *testing.T) {
	tests := []struct {
		name string
		cfg  Config
		fs   float64
	}{
		{"nfft not power of two", Config{NFFT: 1000}, 16000},
		{"negative hop", Config{Hop: -1}, 16000},
		{"bad scale", Config{Scale: "bark"}, 16000},
		{"bad norm", Config{Norm: "max"}, 16000},
		{"bad pad", Config{Pad: "edge"}, 16000},
		{"bad log", Config{Log: "ln"}, 16000},
		{"fmax above nyquist", Config{FMax: 9000}, 16000},
		{"fmin above fmax", Config{FMin: 5000, FMax: 4000}, 16000},
		{"zero rate", Config{}, 0},
		{"negative floor", Config{Floor: -1}, 16000},
	}
	for _, tc := range tests {
		if _, err := NewLogMel(tc.cfg, tc.fs); err == nil {
			t.Errorf("%s: no error", tc.name)
		}
	}
	c, err := Config{}.Resolve(16000)
	if err != nil {
		t.Fatal(err)
	}
	if c.NFFT != 1024 || c.Hop != 512 || c.Bands != 128 || c.FMax != 8000 || c.Scale != ScaleHTK || c.Norm != NormPeak || c.Log != LogDB {
		t.Errorf("defaults: %+v", c)
	}
}
