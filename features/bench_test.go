package features

import (
	"math/rand/v2"
	"testing"
)

func noise(n int, seed uint64) []float64 {
	rng := rand.New(rand.NewPCG(seed, 1))
	x := make([]float64, n)
	for i := range x {
		x[i] = 0.1 * rng.NormFloat64()
	}
	return x
}

func benchLogMel(b *testing.B, seconds float64) {
	const fs = 16000
	l, err := NewLogMel(Config{}, fs)
	if err != nil {
		b.Fatal(err)
	}
	x := noise(int(seconds*fs), 1)
	dst, frames := l.Compute(nil, x)
	b.ReportAllocs()
	b.SetBytes(int64(len(x) * 8))
	b.ResetTimer()
	for b.Loop() {
		dst, _ = l.Compute(dst, x)
	}
	b.ReportMetric(float64(frames)*float64(b.N)/b.Elapsed().Seconds(), "frames/s")
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(frames), "ns/frame")
}

func BenchmarkLogMel1s(b *testing.B)  { benchLogMel(b, 1) }
func BenchmarkLogMel10s(b *testing.B) { benchLogMel(b, 10) }
func BenchmarkLogMel60s(b *testing.B) { benchLogMel(b, 60) }

func BenchmarkSTFT10s(b *testing.B) {
	s, err := NewSTFT(Config{})
	if err != nil {
		b.Fatal(err)
	}
	x := noise(160000, 2)
	dst, frames := s.Compute(nil, x)
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		dst, _ = s.Compute(dst, x)
	}
	b.ReportMetric(float64(frames)*float64(b.N)/b.Elapsed().Seconds(), "frames/s")
}
