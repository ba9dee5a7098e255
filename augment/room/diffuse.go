package room

import (
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/dsp/fourier"
)

// Lowest centre of the diffuse tail's band grid, Hz. Below it the lowest
// band's decay applies.
const tailLowHz = 25.0

// MixingTime returns the time after the direct sound from which the image
// method hands over to the diffuse tail, in seconds: the mean-free-path
// predictor of the perceptual mixing time, t = 20·V/S ms + 12 ms (Lindau,
// Kosanke & Weinzierl 2012, J. Audio Eng. Soc. 60(11); from memory). It is
// 32 ms for 20 × 10 × 3 m, 51 ms for 24 × 14 × 7 m.
func (r Room) MixingTime() float64 {
	return (20*r.Volume()/r.SurfaceArea() + 12) / 1000
}

// tailBands returns the centres of the diffuse tail's band grid, Hz:
// 1000·2^(k/perOctave) from the first at or above tailLowHz up to the last
// below fs/2.
func tailBands(perOctave int, fs float64) []float64 {
	var out []float64
	for k := int(math.Ceil(float64(perOctave) * math.Log2(tailLowHz/1000))); ; k++ {
		f := 1000 * math.Exp2(float64(k)/float64(perOctave))
		if f >= fs/2 {
			break
		}
		out = append(out, f)
	}
	return out
}

// crossWeight is bandWeight for centres in Hz as floats: the cos²/sin²
// crossover in log frequency between neighbouring centres; the lowest
// band extends to 0 Hz, the highest to fs/2. The weights sum to 1.
func crossWeight(i int, centres []float64, f float64) float64 {
	m := len(centres)
	switch {
	case f <= centres[0]:
		if i == 0 {
			return 1
		}
		return 0
	case f >= centres[m-1]:
		if i == m-1 {
			return 1
		}
		return 0
	}
	for j := max(i-1, 0); j <= min(i, m-2); j++ {
		a, b := centres[j], centres[j+1]
		if f >= a && f < b {
			v := math.Log2(f/a) / math.Log2(b/a)
			c := math.Cos(math.Pi * v / 2)
			if i == j {
				return c * c
			}
			return 1 - c*c
		}
	}
	return 0
}

// interpLog interpolates the values ys given at centres xs (ascending)
// linearly in log2 frequency at f, holding the end values outside.
func interpLog(xs, ys []float64, f float64) float64 {
	m := len(xs)
	if f <= xs[0] {
		return ys[0]
	}
	if f >= xs[m-1] {
		return ys[m-1]
	}
	for j := 0; j < m-1; j++ {
		if f < xs[j+1] {
			v := math.Log2(f/xs[j]) / math.Log2(xs[j+1]/xs[j])
			return ys[j] + v*(ys[j+1]-ys[j])
		}
	}
	return ys[m-1]
}

// AbsorptionAt returns the α of each wall at f Hz: the broadband
// Absorption without Octave, otherwise the octave values interpolated
// linearly in log frequency between the given centres (and held beyond
// the lowest and the highest).
func (r Room) AbsorptionAt(f float64) [6]float64 {
	centres := r.bands()
	if centres == nil {
		return r.Absorption
	}
	xs := make([]float64, len(centres))
	ys := make([]float64, len(centres))
	for i, hz := range centres {
		xs[i] = float64(hz)
	}
	var out [6]float64
	for w := range out {
		for i, hz := range centres {
			ys[i] = r.Octave[hz][w]
		}
		out[w] = interpLog(xs, ys, f)
	}
	return out
}

// RT60At returns the reverberation time the diffuse tail decays with at
// f Hz: the measured RT60 interpolated linearly in log frequency between
// the given octave centres (held beyond the ends) when RT60 is given,
// otherwise Eyring's time for AbsorptionAt(f).
func (r Room) RT60At(f float64) float64 {
	if len(r.RT60) > 0 {
		var xs, ys []float64
		for _, hz := range OctaveBands() {
			if t, ok := r.RT60[hz]; ok {
				xs = append(xs, float64(hz))
				ys = append(ys, t)
			}
		}
		return interpLog(xs, ys, f)
	}
	b := r
	b.Absorption = r.AbsorptionAt(f)
	b.Octave = nil
	return b.Eyring()
}

// latticeEnergy returns ⟨e^(−r(u)·t)⟩ over directions u for walls α: the
// expected squared gain of the images c·t away in the image lattice (see
// specularDecayTime), 1 at t = 0.
func latticeEnergy(size [3]float64, alpha [6]float64, c, t float64) float64 {
	const n = 32
	var kappa [3]float64
	for a := range kappa {
		kappa[a] = -(math.Log1p(-alpha[2*a]) + math.Log1p(-alpha[2*a+1])) / 2 / size[a]
	}
	var s, w float64
	for i := 0; i < n; i++ {
		st, ct := math.Sincos((float64(i) + 0.5) * math.Pi / 2 / n)
		for j := 0; j < n; j++ {
			sp, cp := math.Sincos((float64(j) + 0.5) * math.Pi / 2 / n)
			s += st * math.Exp(-c*t*(st*cp*kappa[0]+st*sp*kappa[1]+ct*kappa[2]))
			w += st
		}
	}
	return s / w
}

// kernelEnergy returns the mean over fractional delays of Σk² for the
// arrival kernel (the energy one image of unit amplitude puts into the
// IR, a little below 1 because the kernel is band-limited).
func kernelEnergy(table []float64, w int) float64 {
	taps := 2 * w
	s := 0.0
	for p := 0; p < phases; p++ {
		for _, v := range table[p*taps : (p+1)*taps] {
			s += v * v
		}
	}
	return s / phases
}

// addTail adds the diffuse tail to h from sample start on: Gaussian noise
// from rng, split by the crossovers of centres into bands, each band
// multiplied by its exponential envelope and summed. Band i carries, per
// sample, the expected energy level[i] at start, falling by 60 dB in
// t60[i] seconds. Each band filter acts on the stationary noise before its
// envelope is applied, so nothing reaches before start, and bands with
// equal envelopes sum back to the noise itself.
func addTail(h []float64, start int, centres, level, t60 []float64, fs float64, rng *rand.Rand) {
	n := len(h) - start
	if n <= 0 {
		return
	}
	size := 1
	for size < n {
		size <<= 1
	}
	noise := make([]float64, size)
	for i := range noise {
		noise[i] = rng.NormFloat64()
	}
	plan := fourier.NewFFT(size)
	spec := plan.Coefficients(nil, noise)
	band := make([]complex128, len(spec))
	seq := make([]float64, size)
	out := h[start:]
	scale := 1 / float64(size)
	df := fs / float64(size)
	for b := range centres {
		// Band b is non-zero only between its neighbours' centres.
		lo, hi := 0, len(spec)-1
		if b > 0 {
			lo = int(centres[b-1] / df)
		}
		if b < len(centres)-1 {
			hi = min(int(math.Ceil(centres[b+1]/df)), hi)
		}
		clear(band)
		for k := lo; k <= hi; k++ {
			band[k] = spec[k] * complex(crossWeight(b, centres, float64(k)*df), 0)
		}
		plan.Sequence(seq, band)
		// Amplitude envelope e^(−3·ln10·t/T60) (energy −60 dB at T60),
		// stepped by a constant factor per sample.
		step := math.Exp(-3 * math.Ln10 / (t60[b] * fs))
		env := math.Sqrt(level[b]) * scale
		for i := range out {
			out[i] += env * seq[i]
			env *= step
		}
	}
}
