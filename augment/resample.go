package augment

import "thrum/machine/dsp"

// The resampler lives in machine/dsp, where the ingest path (recordings at
// another rate than the plant's) uses it too; these names keep augment's
// API.

// Resampler is dsp.Resampler: a polyphase Kaiser-windowed sinc plan.
type Resampler = dsp.Resampler

// Plans is dsp.Plans: resampler plans cached by ratio.
type Plans = dsp.Plans

// NewResampler builds the plan for speed ratio r (see dsp.NewResampler).
func NewResampler(r float64) *Resampler { return dsp.NewResampler(r) }

// KaiserBeta is dsp.KaiserBeta.
func KaiserBeta(attDB float64) float64 { return dsp.KaiserBeta(attDB) }

// Speed changes the playback speed by Ratio: bandlimited resampling, so
// pitch and tempo move together, as when the machine itself runs faster.
// Ratio > 1 speeds up (shorter output, every line at Ratio times its
// frequency). The output has round(len(x)/Ratio) samples. Plans, when
// set, caches the resampler plan (about a millisecond to build) across
// calls; otherwise each Apply builds one. dst may not alias x. Apply
// panics if Ratio is not positive and finite.
type Speed struct {
	Ratio float64
	Plans *Plans
}

// Apply implements Transform.
func (s Speed) Apply(dst, x []float64, fs float64) []float64 {
	if s.Plans != nil {
		return s.Plans.Resampler(s.Ratio).Apply(dst, x)
	}
	return NewResampler(s.Ratio).Apply(dst, x)
}
