package features

import "thrum/features/fft"

// powerPlan is the seam between the STFT and the real FFT: the one-sided
// power spectrum |X[k]|², k = 0..n/2, of an unnormalised n-point DFT.
// A plan holds scratch space and is not safe for concurrent use.
type powerPlan interface {
	power(dst, src []float64) []float64
}

// newPowerPlan returns the plan for size n (a power of two, checked by the
// caller).
func newPowerPlan(n int) fftPlan { return fftPlan{fft.NewReal(n)} }

// fftPlan uses the fused power-spectrum path of features/fft.
type fftPlan struct{ r *fft.Real }

func (p fftPlan) power(dst, src []float64) []float64 { return p.r.PowerSpectrum(dst, src) }

// powerWindowed is power of src[t]·win[t], each product rounded as the
// separate multiply of STFT.window rounds it.
func (p fftPlan) powerWindowed(dst, src, win []float64) []float64 {
	return p.r.PowerSpectrumWindowed(dst, src, win)
}
