package dsp

import (
	"fmt"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/dsp/fourier"
)

var benchSizes = []int{256, 1024, 4096, 65536, 1 << 18}

// BenchmarkRealForward times Forward against gonum's dsp/fourier FFT in the
// same run.
func BenchmarkRealForward(b *testing.B) {
	for _, n := range benchSizes {
		x := randReal(rand.New(rand.NewPCG(9, 1)), n)
		dst := make([]complex128, n/2+1)
		b.Run(fmt.Sprintf("fft/%d", n), func(b *testing.B) {
			p := NewRealFFT(n)
			b.ReportAllocs()
			for b.Loop() {
				p.Forward(dst, x)
			}
		})
		b.Run(fmt.Sprintf("gonum/%d", n), func(b *testing.B) {
			p := fourier.NewFFT(n)
			b.ReportAllocs()
			for b.Loop() {
				p.Coefficients(dst, x)
			}
		})
	}
}

func BenchmarkRealInverse(b *testing.B) {
	for _, n := range benchSizes {
		p := NewRealFFT(n)
		X := p.Forward(nil, randReal(rand.New(rand.NewPCG(9, 2)), n))
		dst := make([]float64, n)
		b.Run(fmt.Sprintf("fft/%d", n), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				p.Inverse(dst, X)
			}
		})
		b.Run(fmt.Sprintf("gonum/%d", n), func(b *testing.B) {
			g := fourier.NewFFT(n)
			b.ReportAllocs()
			for b.Loop() {
				g.Sequence(dst, X)
			}
		})
	}
}

func BenchmarkPowerSpectrum(b *testing.B) {
	for _, n := range []int{512, 1024, 2048} {
		x := randReal(rand.New(rand.NewPCG(9, 3)), n)
		x32 := make([]float32, n)
		for i, v := range x {
			x32[i] = float32(v)
		}
		p := NewRealFFT(n)
		dst := make([]float64, n/2+1)
		b.Run(fmt.Sprintf("float64/%d", n), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				p.PowerSpectrum(dst, x)
			}
		})
		b.Run(fmt.Sprintf("float32/%d", n), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				p.PowerSpectrum32(dst, x32)
			}
		})
	}
}

func BenchmarkComplexForward(b *testing.B) {
	for _, n := range []int{512, 4096, 65536} {
		x := randComplex(rand.New(rand.NewPCG(9, 4)), n)
		dst := make([]complex128, n)
		b.Run(fmt.Sprintf("fft/%d", n), func(b *testing.B) {
			p := NewComplexFFT(n)
			b.ReportAllocs()
			for b.Loop() {
				p.Forward(dst, x)
			}
		})
		b.Run(fmt.Sprintf("gonum/%d", n), func(b *testing.B) {
			p := fourier.NewCmplxFFT(n)
			b.ReportAllocs()
			for b.Loop() {
				p.Coefficients(dst, x)
			}
		})
	}
}

// BenchmarkConvolverApply: a 10 s, 16 kHz-scale input (155 340 samples)
// through a 12 800-tap impulse response.
func BenchmarkConvolverApply(b *testing.B) {
	rng := rand.New(rand.NewPCG(9, 5))
	x := randReal(rng, 155340)
	h := randReal(rng, 12800)
	c := NewConvolver(h)
	dst := c.Apply(nil, x) // caches the kernel spectrum
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		c.Apply(dst, x)
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/1e6, "ms/op")
}
