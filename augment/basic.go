package augment

import "math"

// Gain scales by DB decibels (amplitude factor 10^(DB/20)). It never
// clips: levels above full scale are handled once, at the end, by Protect.
// dst may alias x.
type Gain struct {
	DB float64
}

// Apply implements Transform.
func (g Gain) Apply(dst, x []float64, fs float64) []float64 {
	dst = grow(dst, len(x))
	k := math.Pow(10, g.DB/20)
	for i, v := range x {
		dst[i] = k * v
	}
	return dst
}

// Invert flips the polarity (y = −x). dst may alias x.
type Invert struct{}

// Apply implements Transform.
func (Invert) Apply(dst, x []float64, fs float64) []float64 {
	dst = grow(dst, len(x))
	for i, v := range x {
		dst[i] = -v
	}
	return dst
}

// Shift delays the clip by Seconds (negative advances it), rounded to
// the nearest sample; the length is kept. Circular rotates the clip;
// otherwise the vacated samples are zero. dst may not alias x.
type Shift struct {
	Seconds  float64
	Circular bool
}

// Apply implements Transform.
func (s Shift) Apply(dst, x []float64, fs float64) []float64 {
	n := len(x)
	dst = grow(dst, n)
	if n == 0 {
		return dst
	}
	d := int(math.Round(s.Seconds * fs))
	if s.Circular {
		d %= n
		if d < 0 {
			d += n
		}
		copy(dst[d:], x[:n-d])
		copy(dst[:d], x[n-d:])
		return dst
	}
	clear(dst)
	switch {
	case d >= n || -d >= n:
	case d >= 0:
		copy(dst[d:], x[:n-d])
	default:
		copy(dst[:n+d], x[-d:])
	}
	return dst
}

// Protect scales x in place so its peak magnitude is at most Ceiling and
// returns the factor applied (1 when x already fits). Scaling the whole
// variant keeps every SNR and level ratio inside it; the factor belongs in
// the ledger.
func Protect(x []float64) float64 {
	peak := PeakAbs(x)
	if peak <= Ceiling {
		return 1
	}
	k := Ceiling / peak
	for peak*k > Ceiling { // rounding of the quotient may land a hair above
		k = math.Nextafter(k, 0)
	}
	for i := range x {
		x[i] *= k
	}
	return k
}

// PeakAbs returns the largest |x[i]| (0 for an empty x; NaNs are skipped).
func PeakAbs(x []float64) float64 {
	var peak float64
	for _, v := range x {
		if a := math.Abs(v); a > peak {
			peak = a
		}
	}
	return peak
}

// Ceiling is the peak magnitude Protect allows, just under full scale so
// a 16-bit or 24-bit writer never saturates.
const Ceiling = 0.999
