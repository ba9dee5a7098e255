package room

import (
	"fmt"
	"math"
)

// EDC writes the Schroeder energy decay curve of h into dst (nil allocates):
//
//	EDC[i] = 10·log10( Σ_{k≥i} h[k]² / Σ_k h[k]² )  dB,
//
// so EDC[0] = 0 dB. Samples after the last non-zero one are −Inf; if h has
// no energy every value is NaN.
func EDC(dst, h []float64) []float64 {
	if cap(dst) < len(h) {
		dst = make([]float64, len(h))
	}
	dst = dst[:len(h)]
	// Backward integration: small late terms are summed first.
	s := 0.0
	for i := len(h) - 1; i >= 0; i-- {
		s += h[i] * h[i]
		dst[i] = s
	}
	total := s
	for i, v := range dst {
		dst[i] = 10 * math.Log10(v/total)
	}
	return dst
}

// onset returns the first index where h² comes within 20 dB of its maximum:
// the arrival of the direct sound, used as time zero (ISO 3382-1).
func onset(h []float64) int {
	peak := 0.0
	for _, v := range h {
		peak = math.Max(peak, v*v)
	}
	for i, v := range h {
		if v*v >= peak*0.01 {
			return i
		}
	}
	return 0
}

// DecayTime fits a least-squares line to the Schroeder curve of h (fs Hz)
// between the levels fromDB and toDB (dB re the total energy, e.g. −5 and
// −25), counted from the onset of h, and returns the time for a 60 dB
// decay at that slope, in seconds. It fails when the curve does not reach
// toDB, when fewer than 3 samples fall in the range, when the slope is not
// negative, or when h ends less than 10 dB (along the fitted line) below
// toDB.
func DecayTime(h []float64, fs float64, fromDB, toDB float64) (float64, error) {
	if !(fs > 0) {
		return 0, fmt.Errorf("room: sampling rate %g Hz, want > 0", fs)
	}
	if !(fromDB <= 0 && toDB < fromDB) {
		return 0, fmt.Errorf("room: decay range %g…%g dB, want 0 ≥ from > to", fromDB, toDB)
	}
	if len(h) == 0 {
		return 0, fmt.Errorf("room: empty impulse response")
	}
	start := onset(h)
	edc := EDC(nil, h[start:])
	if math.IsNaN(edc[0]) {
		return 0, fmt.Errorf("room: impulse response has no energy")
	}
	i1 := -1
	i2 := -1
	for i, v := range edc {
		if i1 < 0 && v <= fromDB {
			i1 = i
		}
		if v < toDB {
			i2 = i
			break
		}
	}
	if i2 < 0 {
		return 0, fmt.Errorf("room: decay reaches only %.1f dB, not %g dB", edc[len(edc)-1], toDB)
	}
	if i1 < 0 || i2-i1 < 3 {
		return 0, fmt.Errorf("room: %d samples between %g and %g dB, want ≥ 3", max(i2-i1, 0), fromDB, toDB)
	}
	// Least squares on (i, EDC[i]) for i in [i1, i2).
	var sx, sy, sxx, sxy float64
	m := float64(i2 - i1)
	for i := i1; i < i2; i++ {
		x := float64(i - i1)
		sx += x
		sy += edc[i]
		sxx += x * x
		sxy += x * edc[i]
	}
	slope := (m*sxy - sx*sy) / (m*sxx - sx*sx) // dB per sample
	if !(slope < 0) {
		return 0, fmt.Errorf("room: decay slope %g dB/s is not negative", slope*fs)
	}
	// The end of h must lie 10 dB of fitted decay below toDB, as ISO 3382-1
	// asks of the noise floor: otherwise the truncation bends the curve
	// inside the range.
	intercept := (sy - slope*sx) / m
	if end := intercept + slope*float64(len(edc)-1-i1); end > toDB-10 {
		return 0, fmt.Errorf("room: impulse response ends %.1f dB down the fitted decay, want ≤ %g dB", end, toDB-10)
	}
	return -60 / (slope * fs), nil
}

// T20 is DecayTime over −5…−25 dB (ISO 3382-1).
func T20(h []float64, fs float64) (float64, error) { return DecayTime(h, fs, -5, -25) }

// T30 is DecayTime over −5…−35 dB (ISO 3382-1).
func T30(h []float64, fs float64) (float64, error) { return DecayTime(h, fs, -5, -35) }

// EDT, the early decay time, is DecayTime over 0…−10 dB (ISO 3382-1).
func EDT(h []float64, fs float64) (float64, error) { return DecayTime(h, fs, 0, -10) }
