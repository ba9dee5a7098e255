package features

import (
	"testing"

	"thrum/machine/dsp"
)

func BenchmarkPartFFT(b *testing.B) {
	r := dsp.NewRealFFT(1024)
	x := noise(1024, 1)
	d := make([]float64, 513)
	for b.Loop() {
		r.PowerSpectrum(d, x)
	}
}

func BenchmarkPartMel(b *testing.B) {
	fb, _ := NewFilterbank(Config{}, 16000)
	x := noise(513, 1)
	d := make([]float64, 128)
	for b.Loop() {
		fb.Apply(d, x)
	}
}

func BenchmarkPartLog(b *testing.B) {
	l, _ := NewLogMel(Config{}, 16000)
	x := noise(128, 1)
	for i := range x {
		x[i] = x[i]*x[i] + 1e-3
	}
	d := make([]float32, 128)
	for b.Loop() {
		l.logRow(d, x)
	}
}

func BenchmarkPartWindow(b *testing.B) {
	s, _ := NewSTFT(Config{})
	x := noise(4096, 1)
	for b.Loop() {
		s.window(x, 1)
	}
}
