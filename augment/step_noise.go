package augment

import (
	"math/rand/v2"

	"thrum/machine"
	"thrum/machine/ledger"
)

// noiseStep adds coloured noise at SNR decibels (Noise), the level measured
// with Weighting ("A" or "none"). Colour is white, pink or brown (drawn when
// the recipe says any); Seed seeds the noise generator. MeasuredSNR is the
// SNR re-measured on the mix, set by apply; when it has no value, why is
// recorded instead (the record's undefined map).
type noiseStep struct {
	SNR       float64
	Colour    string
	Weighting string
	Seed      uint64

	applied     bool
	MeasuredSNR float64
	undefined   string
}

func init() { registerStep("noise", drawNoise) }

func drawNoise(s *machine.Step, rng *rand.Rand, _ DrawContext) StepParams {
	p := &noiseStep{SNR: uniform(rng, s.Range, s.Increment), Colour: s.Mode}
	if p.Colour == "any" || p.Colour == "" {
		p.Colour = []string{"white", "pink", "brown"}[rng.IntN(3)]
	}
	p.Weighting = weightingName(s.Weighting)
	p.Seed = uint64(rng.Uint32())
	return p
}

func (p *noiseStep) apply(se stepEnv, dst, x []float64) []float64 {
	w := weighting(p.Weighting)
	out := Noise{Colour: p.Colour, SNR: p.SNR, Weighting: w, Rand: NewRand(p.Seed)}.Apply(dst, x, se.fs)
	got, why := measuredSNR(x, out, se.fs, w)
	if why != "" {
		p.undefined = "noise step: " + why
	} else {
		p.MeasuredSNR, p.applied = got, true
	}
	return out
}

// guard: the re-measured SNR must have a value and match the drawn one
// (snrOK).
func (p *noiseStep) guard(se stepEnv) string {
	if p.undefined != "" {
		return RejectSNRUndefined
	}
	if !snrOK(p.MeasuredSNR, p.SNR, se.step.Range) {
		return RejectSNR
	}
	return ""
}

func (p *noiseStep) Record() ledger.StepRecord {
	// Seeds are drawn as 32-bit values, so the ledger's number is exact.
	params := map[string]float64{"snr_db": p.SNR, "noise_seed": float64(p.Seed)}
	if p.applied {
		params["measured_snr_db"] = p.MeasuredSNR
	}
	r := stepRecord("noise", params, map[string]string{"colour": p.Colour, "weighting": p.Weighting})
	undefined(&r, "measured_snr_db", p.undefined)
	return r
}
