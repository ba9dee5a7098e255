package neardup

import "math"

// The decision threshold follows the bit error model of Haitsma & Kalker
// (2002, section 4.3, from memory): for two unrelated prints the bits
// compared differ with probability 1/2, so the BER over n bits is close to
// normal with mean 0.5 and, were the bits independent, standard deviation
// 1/(2√n) (the normal approximation of the binomial, common practice).
// Bits of neighbouring frames and bands are correlated, which multiplies
// the standard deviation by a factor c; the paper measured c ≈ 3 for its
// prints, and thrum's prints measure c ≈ 3.2 … 3.5, growing slowly with the
// number of frames compared (distinct recordings of one synthetic machine,
// fixed alignment, 64 to 340 frames at CommonRate: TestThresholdCorrelation).
// The false-alarm probability of one comparison at threshold T is then
//
//	Pf(T) = ½ erfc( (1 − 2T)·√n / (c·√2) )
//
// and a query is compared with one indexed print at up to thrCandidates
// alignments (ixPerPrint candidate offsets × 13 slopes × 41 offsets of the
// best-line search), so the threshold for a per-pair false-alarm
// probability of at most thrPairFalseAlarm (union bound) is
//
//	T(n) = 0.5 − c·z / (2√n),  z = Φ⁻¹(1 − thrPairFalseAlarm / thrCandidates),
//
// capped at MaxBER. Few bits compared (a short clip, or a line over part
// of its blocks, or much of it silent) give a lower threshold, so a 5 s clip
// is held to the same false-alarm bound as a 10 s one: 0.326 at 4 096 bits,
// 0.377 at 8 192 (a whole 5 s clip); the cap of 0.39 takes over from about
// 10 200 bits (319 frames, 5.1 s). The verifier keeps, of all the lines it
// tries, the one with the lowest BER − T(bits), and a pair is a match when
// that is at most 0: a match needs some alignment below its own threshold,
// so the union bound holds whatever the line chosen.
const (
	// thrCorrelation is c, rounded up from the largest measured value
	// (3.49 at 340 frames, just past the 319 where T(n) meets the cap) with
	// room for the sampling error of that estimate (about 5 % from 540
	// pairs); TestThresholdCorrelation checks it.
	thrCorrelation    = 3.7
	thrPairFalseAlarm = 1e-6
	thrCandidates     = ixPerPrint * 13 * (2*ixDrift + 1)
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
