package neardup

import "math"

// The decision threshold follows the bit error model of Haitsma & Kalker
// (2002, section 4.3, from memory): for two unrelated prints the bits
// compared differ with probability 1/2, so the BER over n bits is close to
// normal with mean 0.5 and, were the bits independent, standard deviation
// 1/(2√n) (the normal approximation of the binomial, common practice).
// Bits of neighbouring frames are correlated, which multiplies the standard
// deviation by a factor c; the paper measured c ≈ 3 for its prints, and
// thrum's prints measure c ≈ 3.0 … 3.1 (distinct synthetic recordings,
// fixed alignment, 5 s and 10 s clips at CommonRate). The false-alarm
// probability of one comparison at threshold T is then
//
//	Pf(T) = ½ erfc( (1 − 2T)·√n / (c·√2) )
//
// and a candidate is compared at thrCandidates alignments (13 slopes × 41
// offsets of the best-line search), so the threshold for a per-pair false
// alarm probability of at most thrPairFalseAlarm (union bound) is
//
//	T(n) = 0.5 − c·z / (2√n),  z = Φ⁻¹(1 − thrPairFalseAlarm / thrCandidates),
//
// capped at MaxBER. Few bits compared (a short clip, or a line over half
// its blocks, or much of it silent) give a lower threshold, so a 5 s clip
// is held to the same false-alarm rate as a 10 s one: 0.362 at 4 096 bits
// (two verification blocks), 0.406 at 8 832 (a whole 5 s clip) before the
// cap.
const (
	thrCorrelation    = 3.2 // c, rounded up from the measured 3.0 … 3.1
	thrPairFalseAlarm = 1e-6
	thrCandidates     = 13 * (2*ixDrift + 1)
)

// thrZ is z above.
var thrZ = math.Sqrt2 * math.Erfcinv(2*thrPairFalseAlarm/thrCandidates)

// Threshold returns the BER at or below which two prints compared over
// bits bits are called near-duplicates: 0.5 − c·z/(2√bits) (see above),
// at most maxBER (0 means DefaultMaxBER); 0 when no bit was compared.
func Threshold(bits int, maxBER float64) float64 {
	if maxBER == 0 {
		maxBER = DefaultMaxBER
	}
	if bits <= 0 {
		return 0
	}
	return math.Min(maxBER, 0.5-thrCorrelation*thrZ/(2*math.Sqrt(float64(bits))))
}
