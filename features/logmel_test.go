package features

import (
	"math"
	"testing"
)

func tone(n int, fs, f, amp float64) []float64 {
	x := make([]float64, n)
	for i := range x {
		x[i] = amp * math.Sin(2*math.Pi*f*float64(i)/fs)
	}
	return x
}

func TestLogMelTonePeak(t *testing.T) {
	const fs = 16000
	for _, cfg := range []Config{
		{},
		{Scale: ScaleSlaney, Norm: NormArea},
		{Bands: 64, FMin: 100, FMax: 6000, Center: true},
		{Log: LogNumpy},
	} {
		l, err := NewLogMel(cfg, fs)
		if err != nil {
			t.Fatal(err)
		}
		out, frames := l.Compute(nil, tone(fs, fs, 1000, 0.5))
		nb := l.Bands()
		mean := make([]float64, nb)
		for i := range frames {
			for b := range nb {
				mean[b] += float64(out[i*nb+b])
			}
		}
		best := 0
		for b := range mean {
			if mean[b] > mean[best] {
				best = b
			}
		}
		fb := l.Filterbank()
		nearest := 0
		for b := range nb {
			if math.Abs(fb.CentreHz(b)-1000) < math.Abs(fb.CentreHz(nearest)-1000) {
				nearest = b
			}
		}
		if best != nearest {
			t.Errorf("%+v: peak in band %d (%.1f Hz), nearest to 1 kHz is %d (%.1f Hz)",
				cfg, best, fb.CentreHz(best), nearest, fb.CentreHz(nearest))
		}
	}
}

func TestLogMelDBReference(t *testing.T) {
	// 1 kHz is bin 64 exactly at fs 16 kHz, n_fft 1024. A sine of amplitude
	// A there puts (A·N/4)² in bin 64 and (A·N/8)² in bins 63 and 65 (Hann
	// coherent gain 0.5, Harris 1978), so with the full-scale reference the
	// mel power of band b is A²·(W[b][64] + (W[b][63] + W[b][65])/4).
	const fs, amp = 16000, 0.25
	l, err := NewLogMel(Config{}, fs)
	if err != nil {
		t.Fatal(err)
	}
	out, frames := l.Compute(nil, tone(4096, fs, 1000, amp))
	dense := l.Filterbank().Dense()
	bins := l.Filterbank().Bins
	for b := range l.Bands() {
		w := dense[b*bins:]
		p := amp * amp * (w[64] + (w[63]+w[65])/4)
		want := 10 * math.Log10(math.Max(p, DefaultFloor))
		for i := range frames {
			if got := float64(out[i*l.Bands()+b]); math.Abs(got-want) > 1e-3 {
				t.Fatalf("band %d frame %d: %v dB, want %v", b, i, got, want)
			}
		}
	}
	// Silence sits at the floor, −100 dB.
	out, _ = l.Compute(out, make([]float64, 4096))
	for _, v := range out {
		if v != -100 {
			t.Fatalf("silence gives %v dB", v)
		}
	}
}

func TestLogMelNoAlloc(t *testing.T) {
	l, err := NewLogMel(Config{}, 16000)
	if err != nil {
		t.Fatal(err)
	}
	x := noise(16000, 3)
	dst, _ := l.Compute(nil, x)
	if a := testing.AllocsPerRun(5, func() { dst, _ = l.Compute(dst, x) }); a != 0 {
		t.Errorf("%v allocations per call", a)
	}
	// Same input, same output (no hidden state between calls).
	again, _ := l.Compute(nil, x)
	for i := range dst {
		if dst[i] != again[i] {
			t.Fatal("results differ between calls")
		}
	}
}

func TestLogMelWorkersIndependent(t *testing.T) {
	// One extractor per worker: results must not depend on other workers.
	x := noise(3*16000, 8)
	ref, _ := NewLogMel(Config{Scale: ScaleSlaney, Center: true}, 16000)
	want, _ := ref.Compute(nil, x)
	done := make(chan []float32, 2)
	for range 2 {
		go func() {
			l, _ := NewLogMel(Config{Scale: ScaleSlaney, Center: true}, 16000)
			var out []float32
			for range 3 {
				out, _ = l.Compute(out, x)
			}
			done <- out
		}()
	}
	for range 2 {
		got := <-done
		for i := range want {
			if got[i] != want[i] {
				t.Fatal("worker result differs")
			}
		}
	}
}
