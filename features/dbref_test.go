package features

import (
	"math"
	"testing"
)

// TestLogMelFullScaleReference measures what a full-scale sine reads in
// the band whose peak it sits on, with the default settings (n_fft 1024,
// hop 512, 128 HTK bands, unit-peak triangles). The reference of LogDB is
// the power of the bin a full-scale bin-centred sine falls on, so the band
// reads 10·log10(Σ_k W(k)·P(k)/P(k0)): the Hann window's main lobe puts
// the two neighbouring bins at a quarter of the centre bin's power
// (|X[k0±1]| = |X[k0]|/2 for a periodic Hann window, common practice), so
// the band reads 10·log10(W(k0) + (W(k0−1) + W(k0+1))/4): 0 dB only for a
// band narrower than a bin, up to 10·log10(1.5) = +1.76 dB (the window's
// equivalent noise bandwidth of 1.5 bins, common practice) for a band many
// bins wide.
func TestLogMelFullScaleReference(t *testing.T) {
	const fs, nfft = 16000, 1024
	binHz := float64(fs) / nfft
	l, err := NewLogMel(Config{}, fs)
	if err != nil {
		t.Fatal(err)
	}
	fb := l.Filterbank()
	for _, tc := range []struct {
		name string
		band int
	}{
		{"low band, about one bin wide", 12},
		{"middle band", 64},
		{"band 110", 110},
		{"top band", 126},
	} {
		t.Run(tc.name, func(t *testing.T) {
			// the bin nearest the band's peak; the sine sits on it exactly
			k0 := int(math.Round(fb.CentreHz(tc.band) / binHz))
			f := float64(k0) * binHz
			out, frames := l.Compute(nil, tone(fs, fs, f, 1))
			got := 0.0
			for i := range frames {
				got += float64(out[i*l.Bands()+tc.band])
			}
			got /= float64(frames)
			w := func(k int) float64 {
				if k < fb.Start[tc.band] || k >= fb.Stop[tc.band] {
					return 0
				}
				return fb.Weights(tc.band)[k-fb.Start[tc.band]]
			}
			want := 10 * math.Log10(w(k0)+(w(k0-1)+w(k0+1))/4)
			t.Logf("band %d (peak %.1f Hz, %.1f bins wide): full-scale sine at %.3f Hz reads %+.2f dB (formula %+.2f dB)",
				tc.band, fb.CentreHz(tc.band), (fb.Edges[tc.band+2]-fb.Edges[tc.band])/binHz, f, got, want)
			if math.Abs(got-want) > 0.01 {
				t.Errorf("reads %.4f dB, formula %.4f dB", got, want)
			}
			if got < -0.5 || got > 10*math.Log10(1.5)+0.01 {
				t.Errorf("reads %.4f dB, outside 0 … +1.76 dB", got)
			}
		})
	}
}
