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
func newPowerPlan(n int) powerPlan { return fftPlan{fft.NewReal(n)} }

// fftPlan uses the fused power-spectrum path of features/fft.
type fftPlan struct{ r *fft.Real }

func (p fftPlan) power(dst, src []float64) []float64 { return p.r.PowerSpectrum(dst, src) }
