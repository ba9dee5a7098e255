package room

import (
	"math"

	"gonum.org/v1/gonum/dsp/fourier"
)

// bandWeight returns the weight of band i (of the sorted centres) at
// frequency f: 1 below the lowest centre for band 0 and above the highest
// for the last band, and between neighbouring centres cᵢ < cᵢ₊₁ a
// cos²/sin² crossover in log frequency, v = log2(f/cᵢ)/log2(cᵢ₊₁/cᵢ):
// wᵢ = cos²(πv/2), wᵢ₊₁ = sin²(πv/2). The weights sum to 1 at every f.
func bandWeight(i int, centres []int, f float64) float64 {
	m := len(centres)
	lo, hi := float64(centres[0]), float64(centres[m-1])
	switch {
	case f <= lo:
		if i == 0 {
			return 1
		}
		return 0
	case f >= hi:
		if i == m-1 {
			return 1
		}
		return 0
	}
	for j := 0; j < m-1; j++ {
		a, b := float64(centres[j]), float64(centres[j+1])
		if f >= a && f < b {
			v := math.Log2(f/a) / math.Log2(b/a)
			c := math.Cos(math.Pi * v / 2)
			switch i {
			case j:
				return c * c
			case j + 1:
				return 1 - c*c
			}
			return 0
		}
	}
	return 0
}

// combineBands writes Σᵢ Wᵢ * bufs[i] into dst, where Wᵢ is the zero-phase
// filter with frequency response bandWeight(i, ·). The FFT is padded by
// 0.1 s so that the filters' ringing does not wrap around.
func combineBands(dst []float64, bufs [][]float64, centres []int, fs float64) {
	n := len(dst)
	size := 1
	for size < n+int(math.Ceil(0.1*fs)) {
		size <<= 1
	}
	plan := fourier.NewFFT(size)
	seq := make([]float64, size)
	coef := make([]complex128, size/2+1)
	sum := make([]complex128, size/2+1)
	for i, buf := range bufs {
		copy(seq, buf)
		clear(seq[n:])
		plan.Coefficients(coef, seq)
		for k := range coef {
			f := float64(k) * fs / float64(size)
			sum[k] += coef[k] * complex(bandWeight(i, centres, f), 0)
		}
	}
	plan.Sequence(seq, sum)
	scale := 1 / float64(size)
	for i := range dst {
		dst[i] = seq[i] * scale
	}
}
