package augment

import (
	"math/rand/v2"

	"thrum/machine"
	"thrum/machine/ledger"
)

// shiftStep delays the clip by MS milliseconds (Shift), rotating it unless
// Mode is "zero".
type shiftStep struct {
	MS   float64
	Mode string // circular or zero
}

func init() { registerStep("shift", drawShift) }

func drawShift(s *machine.Step, rng *rand.Rand, _ DrawContext) StepParams {
	return &shiftStep{MS: uniform(rng, s.Range, s.Increment), Mode: s.Mode}
}

func (p *shiftStep) apply(se stepEnv, dst, x []float64) []float64 {
	return Shift{Seconds: p.MS / 1000, Circular: p.Mode != "zero"}.Apply(dst, x, se.fs)
}

func (p *shiftStep) guard(stepEnv) string { return "" }

func (p *shiftStep) Record() ledger.StepRecord {
	return stepRecord("shift", map[string]float64{"ms": p.MS}, map[string]string{"mode": p.Mode})
}
