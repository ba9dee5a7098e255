package augment

import (
	"math/rand/v2"

	"thrum/machine"
	"thrum/machine/ledger"
)

// tempoStep changes the duration by Percent without changing pitch
// (Tempo). Non-physical: the record is marked.
type tempoStep struct{ Percent float64 }

func init() { registerStep("tempo", drawTempo) }

func drawTempo(s *machine.Step, rng *rand.Rand, _ DrawContext) StepParams {
	return &tempoStep{Percent: uniform(rng, s.Range, s.Increment)}
}

func (p *tempoStep) apply(se stepEnv, dst, x []float64) []float64 {
	return Tempo{Factor: 1 + p.Percent/100}.Apply(dst, x, se.fs)
}

func (p *tempoStep) guard(stepEnv) string { return "" }

func (p *tempoStep) Record() ledger.StepRecord {
	r := stepRecord("tempo", map[string]float64{"percent": p.Percent}, nil)
	r.Nonphysical = true
	return r
}
