package augment

import (
	"math"
	"math/cmplx"
	"testing"

	"thrum/machine/dsp"
)

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
	n := dsp.NextPow2(4 * len(x))
	buf := make([]float64, n)
	for i, v := range x {
		buf[i] = v * (0.5 - 0.5*math.Cos(2*math.Pi*float64(i)/float64(len(x))))
	}
	spec := dsp.NewRealFFT(n).Forward(nil, buf)
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

// welch returns the one-sided Welch PSD (Hann, 50 % overlap, segment
// length seg) of x and the bin spacing in Hz.
func welch(x []float64, fs float64, seg int) ([]float64, float64) {
	p := dsp.NewRealFFT(seg)
	win := make([]float64, seg)
	for i := range win {
		win[i] = 0.5 - 0.5*math.Cos(2*math.Pi*float64(i)/float64(seg))
	}
	psd := make([]float64, seg/2+1)
	buf := make([]float64, seg)
	var spec []complex128
	count := 0
	for s := 0; s+seg <= len(x); s += seg / 2 {
		for i := range buf {
			buf[i] = x[s+i] * win[i]
		}
		spec = p.Forward(spec, buf)
		for k, c := range spec {
			psd[k] += real(c)*real(c) + imag(c)*imag(c)
		}
		count++
	}
	for k := range psd {
		psd[k] /= float64(count)
	}
	return psd, fs / float64(seg)
}

// slopePerOctave fits 10·log10(PSD) against log2(f) over [flo, fhi],
// after averaging the PSD in sixth-octave bands so every octave weighs the
// same, and returns the slope in dB per octave.
func slopePerOctave(psd []float64, df, flo, fhi float64) float64 {
	var xs, ys []float64
	for lf := math.Log2(flo); lf < math.Log2(fhi); lf += 1.0 / 6 {
		a, b := math.Exp2(lf), math.Exp2(lf+1.0/6)
		var s float64
		n := 0
		for k := int(math.Ceil(a / df)); float64(k)*df < b && k < len(psd); k++ {
			s += psd[k]
			n++
		}
		if n == 0 {
			continue
		}
		xs = append(xs, math.Log2(math.Sqrt(a*b)))
		ys = append(ys, 10*math.Log10(s/float64(n)))
	}
	var mx, my float64
	for i := range xs {
		mx += xs[i]
		my += ys[i]
	}
	mx /= float64(len(xs))
	my /= float64(len(xs))
	var sxy, sxx float64
	for i := range xs {
		sxy += (xs[i] - mx) * (ys[i] - my)
		sxx += (xs[i] - mx) * (xs[i] - mx)
	}
	return sxy / sxx
}

func db(x float64) float64 { return 20 * math.Log10(x) }
