package augment

import (
	"fmt"
	"math"
	"math/rand/v2"

	"thrum/machine/dsp"
)

// Noise colours accepted by Noise and Coloured.
const (
	White = "white" // flat power spectral density
	Pink  = "pink"  // PSD ∝ 1/f: −3.0103 dB/octave
	Brown = "brown" // PSD ∝ 1/f²: −6.0206 dB/octave
)

// brownCornerHz is the leak corner of the brown-noise integrator: below it
// the spectrum flattens instead of growing without bound (common practice
// for a stable random walk).
const brownCornerHz = 2.0

// Coloured fills dst (its length is the number of samples) with zero-mean,
// unit-mean-square noise of the given colour and returns it.
//
//   - white: independent standard normal samples.
//   - pink: white Gaussian noise of the next power-of-two length shaped in
//     the frequency domain by 1/√k per bin k (DC removed), so the PSD is
//     exactly ∝ 1/f down to the lowest bin; the first len(dst) samples.
//   - brown: white noise through the leaky integrator
//     y[n] = ρ·y[n−1] + w[n], ρ = 1 − 2π·fc/fs with fc = 2 Hz, started in
//     its stationary state, then the mean removed.
//
// It returns an error for an unknown colour.
func Coloured(dst []float64, colour string, fs float64, rng *rand.Rand) ([]float64, error) {
	n := len(dst)
	switch colour {
	case White:
		for i := range dst {
			dst[i] = rng.NormFloat64()
		}
	case Pink:
		if n == 0 {
			return dst, nil
		}
		N := dsp.NextPow2(max(n, 2))
		buf := make([]float64, N)
		for i := range buf {
			buf[i] = rng.NormFloat64()
		}
		p := dsp.NewRealFFT(N)
		spec := p.Forward(nil, buf)
		spec[0] = 0
		for k := 1; k < len(spec); k++ {
			spec[k] *= complex(1/math.Sqrt(float64(k)), 0)
		}
		p.Inverse(buf, spec)
		copy(dst, buf)
	case Brown:
		if n == 0 {
			return dst, nil
		}
		rho := 1 - 2*math.Pi*brownCornerHz/fs
		y := rng.NormFloat64() / math.Sqrt(1-rho*rho)
		for i := range dst {
			y = rho*y + rng.NormFloat64()
			dst[i] = y
		}
		var mean float64
		for _, v := range dst {
			mean += v
		}
		mean /= float64(n)
		for i := range dst {
			dst[i] -= mean
		}
	default:
		return dst, fmt.Errorf("augment: unknown noise colour %q", colour)
	}
	normalise(dst)
	return dst, nil
}

// normalise scales x to unit mean square (no change when silent).
func normalise(x []float64) {
	var s float64
	for _, v := range x {
		s += v * v
	}
	if s == 0 {
		return
	}
	k := 1 / math.Sqrt(s/float64(len(x)))
	for i := range x {
		x[i] *= k
	}
}

// Noise adds synthetic noise of a colour (White, Pink or Brown) at SNR dB
// below the clip, measured with Weighting over the whole clip. Rand is the
// noise's only source of randomness. A silent clip is returned unchanged.
// dst may not alias x. Apply panics for an unknown colour or a nil Rand;
// Mix reports the same problems as errors.
type Noise struct {
	Colour    string
	SNR       float64
	Weighting Weighting
	Rand      *rand.Rand
}

// Mix returns the noisy clip and the gain applied to unit-mean-square
// noise.
func (n Noise) Mix(dst, x []float64, fs float64) ([]float64, float64, error) {
	if n.Rand == nil {
		return dst, 0, fmt.Errorf("augment: noise step has no random source")
	}
	dst = grow(dst, len(x))
	if _, err := Coloured(dst, n.Colour, fs, n.Rand); err != nil {
		return dst, 0, err
	}
	g, y, err := Mix(dst, x, dst, fs, n.SNR, n.Weighting)
	return y, g, err
}

// Apply implements Transform.
func (n Noise) Apply(dst, x []float64, fs float64) []float64 {
	y, _, err := n.Mix(dst, x, fs)
	if err == ErrSilent {
		y = grow(y, len(x))
		copy(y, x)
		return y
	}
	if err != nil {
		panic(err.Error())
	}
	return y
}
