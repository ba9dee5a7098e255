package augment

import (
	"math/rand/v2"

	"thrum/machine"
	"thrum/machine/ledger"
)

// gainStep changes the level by DB decibels (Gain).
type gainStep struct{ DB float64 }

func init() { registerStep("gain", drawGain) }

func drawGain(s *machine.Step, rng *rand.Rand, _ DrawContext) StepParams {
	return &gainStep{DB: uniform(rng, s.Range, s.Increment)}
}

func (p *gainStep) apply(se stepEnv, dst, x []float64) []float64 {
	return Gain{DB: p.DB}.Apply(dst, x, se.fs)
}

func (p *gainStep) guard(stepEnv) string { return "" }

func (p *gainStep) Record() ledger.StepRecord {
	return stepRecord("gain", map[string]float64{"db": p.DB}, nil)
}
