package augment

import (
	"fmt"
	"math/rand/v2"

	"thrum/machine"
	"thrum/machine/ledger"
)

// backgroundStep mixes in a background at SNR decibels (Background), the
// level measured with Weighting ("A" or "none"). ID is one of the
// backgrounds a training variant may use, read from Offset frames on; with
// none allowed, plant noise is synthesised from Seed and ID is
// "synthesised". MeasuredSNR is the SNR re-measured on the mix, set by
// apply; when it has no value, or the background's samples are unusable,
// why is recorded instead (the record's undefined map) with the rejection.
type backgroundStep struct {
	SNR       float64
	Weighting string
	ID        string
	Offset    int64
	hasOffset bool
	Seed      uint64

	applied     bool
	MeasuredSNR float64
	undefined   string
	reject      string
}

// synthesisedBackground is the ID recorded for synthesised plant noise.
const synthesisedBackground = "synthesised"

func init() { registerStep("background", drawBackground) }

func drawBackground(s *machine.Step, rng *rand.Rand, dc DrawContext) StepParams {
	p := &backgroundStep{SNR: uniform(rng, s.Range, s.Increment), Weighting: weightingName(s.Weighting)}
	if len(dc.Backgrounds) > 0 {
		p.ID = dc.Backgrounds[rng.IntN(len(dc.Backgrounds))]
		if n := dc.BackgroundFrames[p.ID]; n > 0 {
			p.Offset, p.hasOffset = rng.Int64N(n), true
		}
	} else {
		p.ID = synthesisedBackground
		p.Seed = uint64(rng.Uint32())
	}
	return p
}

func (p *backgroundStep) apply(se stepEnv, dst, x []float64) []float64 {
	w := weighting(p.Weighting)
	var src []float64
	if p.ID == synthesisedBackground {
		src = SynthPlantNoise(make([]float64, len(x)), se.fs, NewRand(p.Seed))
	} else if bad := se.bgBad[p.ID]; bad != nil {
		// nothing to mix: the variant is rejected, naming the file
		p.undefined = fmt.Sprintf("background %s (%s): %v", p.ID, se.bgPath[p.ID], bad)
		p.reject = RejectBackgroundSamples
		if bad.Kind == machine.SampleSilent {
			p.reject = RejectSilentBackground
		}
		return append(dst[:0], x...)
	} else {
		src = se.bg[p.ID]
	}
	out := Background{Source: src, SNR: p.SNR, Weighting: w, Offset: int(p.Offset), CrossfadeSeconds: 0.25}.Apply(dst, x, se.fs)
	got, why := measuredSNR(x, out, se.fs, w)
	if why != "" {
		p.undefined = fmt.Sprintf("background %s: %s", p.ID, why)
		p.reject = RejectSNRUndefined
	} else {
		p.MeasuredSNR, p.applied = got, true
	}
	return out
}

// guard: the background must be usable, and the re-measured SNR must have
// a value and match the drawn one (snrOK).
func (p *backgroundStep) guard(se stepEnv) string {
	if p.reject != "" {
		return p.reject
	}
	if !snrOK(p.MeasuredSNR, p.SNR, se.step.Range) {
		return RejectSNR
	}
	return ""
}

func (p *backgroundStep) Record() ledger.StepRecord {
	params := map[string]float64{"snr_db": p.SNR}
	if p.hasOffset {
		params["offset"] = float64(p.Offset)
	}
	if p.ID == synthesisedBackground {
		// Seeds are drawn as 32-bit values, so the ledger's number is exact.
		params["noise_seed"] = float64(p.Seed)
	}
	if p.applied {
		params["measured_snr_db"] = p.MeasuredSNR
	}
	r := stepRecord("background", params, map[string]string{"weighting": p.Weighting, "background": p.ID})
	undefined(&r, "measured_snr_db", p.undefined)
	return r
}

// BackgroundID is the id of the recording mixed in, "" for synthesised
// plant noise.
func (p *backgroundStep) BackgroundID() string {
	if p.ID == synthesisedBackground {
		return ""
	}
	return p.ID
}
