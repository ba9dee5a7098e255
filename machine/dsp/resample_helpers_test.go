package dsp

import (
	"math"
	"math/cmplx"
	"math/rand/v2"
	"testing"
)

// Test signals and measurements shared by the resampler tests.

// tone returns n samples of amp·cos(2π·f·t + ph) at rate fs.
func tone(n int, f, fs, amp, ph float64) []float64 {
	x := make([]float64, n)
	for i := range x {
		x[i] = amp * math.Cos(2*math.Pi*f*float64(i)/fs+ph)
	}
	return x
}

// fitTone fits a·cos + b·sin at frequency f to y[lo:hi] by least squares
// and returns the amplitude and the mean square of the residual.
func fitTone(y []float64, f, fs float64, lo, hi int) (amp, resid float64) {
	var cc, ss, cs, yc, ys float64
	for i := lo; i < hi; i++ {
		w := 2 * math.Pi * f * float64(i) / fs
		c, s := math.Cos(w), math.Sin(w)
		cc += c * c
		ss += s * s
		cs += c * s
		yc += y[i] * c
		ys += y[i] * s
	}
	det := cc*ss - cs*cs
	a := (yc*ss - ys*cs) / det
	b := (ys*cc - yc*cs) / det
	for i := lo; i < hi; i++ {
		w := 2 * math.Pi * f * float64(i) / fs
		r := y[i] - a*math.Cos(w) - b*math.Sin(w)
		resid += r * r
	}
	return math.Hypot(a, b), resid / float64(hi-lo)
}

// peakFreq returns the frequency of the largest spectral peak of x in
// [flo, fhi] Hz: Hann window, zero padding to at least 4×len(x), quadratic
// interpolation of the log magnitude around the largest bin.
func peakFreq(t *testing.T, x []float64, fs, flo, fhi float64) float64 {
	t.Helper()
	n := NextPow2(4 * len(x))
	buf := make([]float64, n)
	for i, v := range x {
		buf[i] = v * (0.5 - 0.5*math.Cos(2*math.Pi*float64(i)/float64(len(x))))
	}
	spec := NewRealFFT(n).Forward(nil, buf)
	df := fs / float64(n)
	best := -1
	for k := int(flo/df) + 1; k < int(fhi/df) && k+1 < len(spec); k++ {
		if best < 0 || cmplx.Abs(spec[k]) > cmplx.Abs(spec[best]) {
			best = k
		}
	}
	a := math.Log(cmplx.Abs(spec[best-1]))
	b := math.Log(cmplx.Abs(spec[best]))
	c := math.Log(cmplx.Abs(spec[best+1]))
	d := 0.5 * (a - c) / (a - 2*b + c)
	return (float64(best) + d) * df
}

func db(x float64) float64 { return 20 * math.Log10(x) }

func randn(n int, seed uint64) []float64 {
	rng := rand.New(rand.NewPCG(seed, 7))
	x := make([]float64, n)
	for i := range x {
		x[i] = rng.NormFloat64()
	}
	return x
}
