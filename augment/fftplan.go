package augment

import "thrum/features/fft"

// realFFT is the unnormalised real FFT the package uses (forward then
// inverse multiplies by n); n is a power of two. It is not safe for
// concurrent use.
type realFFT struct{ p *fft.Real }

func newRealFFT(n int) *realFFT { return &realFFT{p: fft.NewReal(n)} }

// forward returns the n/2+1 bins of src.
func (r *realFFT) forward(dst []complex128, src []float64) []complex128 {
	return r.p.Forward(dst, src)
}

// inverse returns n samples from n/2+1 bins.
func (r *realFFT) inverse(dst []float64, src []complex128) []float64 {
	return r.p.Inverse(dst, src)
}

// nextPow2 returns the smallest power of two ≥ n (1 for n ≤ 1).
func nextPow2(n int) int { return fft.NextPow2(n) }
