package neardup

import "thrum/augment"

// CommonRate is the sample rate every clip is brought to before PrintFiles
// and Search print it, so that copies at different sample rates (a clip
// and its 44.1 kHz resampling) have prints of one frame hop and are
// compared; the bands of the print (300 Hz to 0.45·8 kHz = 3.6 kHz) lie
// below its Nyquist frequency.
const CommonRate = 8000

// plans caches the resampler plans of the rates seen (safe for concurrent
// use).
var plans augment.Plans

// ToCommonRate returns x, sampled at fs Hz, resampled to CommonRate with
// the project's band-limited resampler (Kaiser-windowed sinc, anti-aliased
// when fs > CommonRate); x itself when fs is CommonRate.
func ToCommonRate(x []float64, fs float64) []float64 {
	if fs == CommonRate || len(x) == 0 {
		return x
	}
	return plans.Resampler(fs/CommonRate).Apply(nil, x)
}
