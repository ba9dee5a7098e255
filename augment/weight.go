package augment

import (
	"fmt"
	"math"
	"strings"
)

// Weighting selects the frequency weighting of a power measurement.
type Weighting int

const (
	// WeightNone measures the plain long-term mean square.
	WeightNone Weighting = iota
	// WeightA applies the IEC 61672-1 A-weighting first.
	WeightA
)

// ParseWeighting maps "", "none" and "z" to WeightNone and "a" to WeightA
// (case-insensitive).
func ParseWeighting(s string) (Weighting, error) {
	switch strings.ToLower(s) {
	case "", "none", "z":
		return WeightNone, nil
	case "a":
		return WeightA, nil
	}
	return WeightNone, fmt.Errorf("augment: unknown weighting %q", s)
}

// String returns "none" or "A".
func (w Weighting) String() string {
	if w == WeightA {
		return "A"
	}
	return "none"
}

// Pole frequencies and 1 kHz normalisation of the A-weighting, IEC
// 61672-1:2013 Annex E (E.4.1, E.4.2).
const (
	aF1    = 20.60
	aF2    = 107.7
	aF3    = 737.9
	aF4    = 12194.0
	aA1000 = -2.000
)

// AWeightDB returns the analytic A-weighting at f Hz in dB, IEC 61672-1:2013
// Eq. (E.6): A(f) = 20·log10(f4²·f⁴ / ((f²+f1²)·√((f²+f2²)(f²+f3²))·(f²+f4²))) − A1000.
func AWeightDB(f float64) float64 {
	f2 := f * f
	r := aF4 * aF4 * f2 * f2 /
		((f2 + aF1*aF1) * math.Sqrt((f2+aF2*aF2)*(f2+aF3*aF3)) * (f2 + aF4*aF4))
	return 20*math.Log10(r) - aA1000
}

// aFilter is a digital A-weighting filter for one sample rate: the
// high-pass part (four zeros at DC, poles f1, f1, f2, f3) by the bilinear
// transform with each pole prewarped, followed by a correction stage, a
// 13-tap linear-phase FIR fitted by least squares to the ratio of the
// analytic A(f) to that high-pass over fs/512…fs/2. The FIR stands in for
// the pole pair at f4, which lies near or above the Nyquist frequency at
// common rates and which the bilinear transform would squeeze towards
// fs/2, and absorbs the small warping of the high-pass near fs/2. The gain
// is then set so the response at 1 kHz equals AWeightDB(1000).
type aFilter struct {
	hp  [2]Biquad
	fir []float64 // symmetric, odd length
}

// aFIRHalf is the number of FIR taps on each side of the centre tap.
const aFIRHalf = 6

func newAFilter(fs float64) *aFilter {
	af := &aFilter{}
	// Analog high-pass s⁴/((s+ω1)²(s+ω2)(s+ω3)) as four first-order
	// sections s/(s+ωp), two per biquad.
	p := [4]float64{aF1, aF1, aF2, aF3}
	var sec [4][3]float64 // b0, b1(= -b0), a1 of first-order high-passes
	for i, fp := range p {
		k := math.Tan(math.Pi * math.Min(fp, 0.49*fs) / fs)
		// H(s) = s/(s+ωp), prewarped: H(z) = (1 − z⁻¹)/((1+K) − (1−K)z⁻¹).
		sec[i] = [3]float64{1 / (1 + k), -1 / (1 + k), -(1 - k) / (1 + k)}
	}
	for i := 0; i < 2; i++ {
		a, b := sec[2*i], sec[2*i+1]
		af.hp[i] = Biquad{
			B0: a[0] * b[0], B1: a[0]*b[1] + a[1]*b[0], B2: a[1] * b[1],
			A1: a[2] + b[2], A2: a[2] * b[2],
		}
	}
	af.fir = af.fitFIR(fs)
	g := math.Pow(10, AWeightDB(1000)/20) / af.mag(1000, fs)
	for i := range af.fir {
		af.fir[i] *= g
	}
	return af
}

// fitFIR fits c0 + 2·Σ ck·cos(kω) by least squares, on a uniform grid of
// fs/512…fs/2, to the ratio of the analytic A-weighting to the magnitude
// of the high-pass sections, and returns the symmetric taps.
func (af *aFilter) fitFIR(fs float64) []float64 {
	const K, grid = aFIRHalf, 256
	var ata [K + 1][K + 2]float64 // normal equations, augmented
	var basis [K + 1]float64
	for g := 1; g <= grid; g++ {
		w := math.Pi * float64(g) / grid
		f := w / (2 * math.Pi) * fs
		target := math.Pow(10, AWeightDB(f)/20) / (af.hp[0].mag(w) * af.hp[1].mag(w))
		basis[0] = 1
		for k := 1; k <= K; k++ {
			basis[k] = 2 * math.Cos(float64(k)*w)
		}
		for i := 0; i <= K; i++ {
			for j := 0; j <= K; j++ {
				ata[i][j] += basis[i] * basis[j]
			}
			ata[i][K+1] += basis[i] * target
		}
	}
	// Gaussian elimination with partial pivoting on a (K+1)² system.
	for c := 0; c <= K; c++ {
		piv := c
		for r := c + 1; r <= K; r++ {
			if math.Abs(ata[r][c]) > math.Abs(ata[piv][c]) {
				piv = r
			}
		}
		ata[c], ata[piv] = ata[piv], ata[c]
		for r := c + 1; r <= K; r++ {
			f := ata[r][c] / ata[c][c]
			for j := c; j <= K+1; j++ {
				ata[r][j] -= f * ata[c][j]
			}
		}
	}
	var coef [K + 1]float64
	for r := K; r >= 0; r-- {
		s := ata[r][K+1]
		for j := r + 1; j <= K; j++ {
			s -= ata[r][j] * coef[j]
		}
		coef[r] = s / ata[r][r]
	}
	taps := make([]float64, 2*K+1)
	for k := 0; k <= K; k++ {
		taps[K+k], taps[K-k] = coef[k], coef[k]
	}
	return taps
}

// mag returns the filter's magnitude response at f Hz.
func (af *aFilter) mag(f, fs float64) float64 {
	w := 2 * math.Pi * f / fs
	m := 1.0
	for _, s := range af.hp {
		m *= s.mag(w)
	}
	c := af.fir[len(af.fir)/2]
	for k := 1; k <= len(af.fir)/2; k++ {
		c += 2 * af.fir[len(af.fir)/2+k] * math.Cos(float64(k)*w)
	}
	return m * math.Abs(c)
}

// aWarmSeconds is how much of the clip, time-reversed, primes the
// A-weighting filter before the clip itself is fed.
const aWarmSeconds = 0.2

// aSettleSeconds is the filter's settling time: the measurement starts
// this long into the clip. The slowest part of the start-up transient is
// the double pole at f1 = 20.6 Hz, t·e^(−2π·f1·t) with a time constant of
// 7.7 ms; after 0.2 s (26 time constants) it has fallen by more than
// 200 dB, far below a 10 Hz tone's −70.4 dB weighting.
const aSettleSeconds = 0.2

// aSkip is how many samples at the start of an n-sample clip the
// measurement leaves out: the settling time, but at most a quarter of the
// clip (a clip shorter than 0.8 s is measured partly inside the
// transient).
func aSkip(n int, fs float64) int {
	return min(int(aSettleSeconds*fs), n/4)
}

// power returns the mean square of the A-weighted x without modifying x or
// allocating. The filter is first run, output discarded, over the first
// aWarmSeconds of x in reverse order (an even reflection about x[0]), so
// it meets x[0] from a state close to steady. The reflection still has a
// slope break at x[0], and the filter's start-up transient from it reads
// several dB high on a low tone (a 10 Hz tone up to +8.7 dB, depending on
// its phase); so the mean square is taken over the outputs aligned with
// x[aSkip] … x[len−1], after the filter has settled. The FIR's centre tap
// lags by aFIRHalf samples; the last few outputs are fed by the
// reflection about x[len−1].
func (af *aFilter) power(x []float64, fs float64) float64 {
	n := len(x)
	if n == 0 {
		return 0
	}
	const L = 2 * aFIRHalf // FIR history carried between blocks
	var s0, s1 biquadState
	var buf [1024 + L]float64
	warm := min(n-1, int(aWarmSeconds*fs))
	skip := aSkip(n, fs)
	// Sample j of the extended sequence: the reversed warm-up, then x,
	// then aFIRHalf samples reflected about the end.
	total := warm + n + aFIRHalf
	src := func(j int) float64 {
		switch {
		case j < warm:
			return x[warm-j]
		case j < warm+n:
			return x[j-warm]
		}
		if k := n - 2 - (j - warm - n); k >= 0 {
			return x[k]
		}
		return 0
	}
	h := af.fir
	var sum float64
	for j := 0; j < total; {
		m := min(len(buf)-L, total-j)
		blk := buf[L : L+m]
		for i := range blk {
			v := s0.step(&af.hp[0], src(j+i))
			blk[i] = s1.step(&af.hp[1], v)
		}
		// The FIR output at extended index j+i reads IIR outputs
		// j+i−L … j+i, i.e. buf[i : i+L+1], and belongs to input j+i−aFIRHalf.
		for i := 0; i < m; i++ {
			if e := j + i - aFIRHalf; e < warm+skip || e >= warm+n {
				continue
			}
			w := buf[i : i+L+1]
			var y float64
			for k, c := range h {
				y += c * w[L-k]
			}
			sum += y * y
		}
		copy(buf[:L], buf[m:m+L])
		j += m
	}
	return sum / float64(n-skip)
}

// Power returns the long-term mean square of x with weighting w, in
// squared full-scale units. fs is needed for WeightA. An empty x has power 0.
// With WeightA the mean square leaves out the filter's settling time at the
// start of x (0.2 s, at most a quarter of x; see aSettleSeconds), so a
// steady tone reads its weighting whatever its phase.
func Power(x []float64, fs float64, w Weighting) float64 {
	if w == WeightA {
		return newAFilter(fs).power(x, fs)
	}
	var s float64
	for _, v := range x {
		s += v * v
	}
	if len(x) == 0 {
		return 0
	}
	return s / float64(len(x))
}

// SNR returns 10·log10(Power(signal)/Power(noise)) in dB, both measured
// with weighting w. It is +Inf for silent noise and −Inf for a silent
// signal (NaN when both are silent).
func SNR(signal, noise []float64, fs float64, w Weighting) float64 {
	if w == WeightA {
		af := newAFilter(fs)
		return 10 * math.Log10(af.power(signal, fs)/af.power(noise, fs))
	}
	return 10 * math.Log10(Power(signal, fs, w)/Power(noise, fs, w))
}
