package dsp

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/dsp/fourier"
)

// gonumPlan computes the power spectrum with gonum's FFTPACK port, an
// independent reference for RealFFT.PowerSpectrum (the STFT's transform).
type gonumPlan struct {
	fft  *fourier.FFT
	coef []complex128
}

func (p *gonumPlan) power(dst, src []float64) []float64 {
	c := p.fft.Coefficients(p.coef, src)
	for k, v := range c {
		re, im := real(v), imag(v)
		dst[k] = re*re + im*im
	}
	return dst[:len(c)]
}

func TestPowerSpectrumMatchesGonum(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 4))
	for _, n := range []int{4, 8, 64, 512, 1024, 4096} {
		ref := &gonumPlan{fft: fourier.NewFFT(n), coef: make([]complex128, n/2+1)}
		pl := NewRealFFT(n)
		x := make([]float64, n)
		for i := range x {
			x[i] = rng.NormFloat64()
		}
		want := ref.power(make([]float64, n/2+1), x)
		got := pl.PowerSpectrum(make([]float64, n/2+1), x)
		var peak float64
		for _, v := range want {
			peak = math.Max(peak, v)
		}
		for k := range want {
			if math.Abs(got[k]-want[k]) > 1e-11*peak {
				t.Fatalf("n=%d bin %d: %v, gonum %v", n, k, got[k], want[k])
			}
		}
	}
}
