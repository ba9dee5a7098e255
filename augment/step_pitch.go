package augment

import (
	"math/rand/v2"

	"thrum/machine"
	"thrum/machine/ledger"
)

// pitchStep shifts the pitch by Cents without changing the duration
// (Pitch). Non-physical: the record is marked.
type pitchStep struct{ Cents float64 }

func init() { registerStep("pitch", drawPitch) }

func drawPitch(s *machine.Step, rng *rand.Rand, _ DrawContext) StepParams {
	return &pitchStep{Cents: uniform(rng, s.Range, s.Increment)}
}

func (p *pitchStep) apply(se stepEnv, dst, x []float64) []float64 {
	return Pitch{Cents: p.Cents}.Apply(dst, x, se.fs)
}

func (p *pitchStep) guard(stepEnv) string { return "" }

func (p *pitchStep) Record() ledger.StepRecord {
	r := stepRecord("pitch", map[string]float64{"cents": p.Cents}, nil)
	r.Nonphysical = true
	return r
}
