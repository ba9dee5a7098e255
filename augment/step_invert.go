package augment

import (
	"math/rand/v2"

	"thrum/machine"
	"thrum/machine/ledger"
)

// invertStep negates the clip (Invert); it has no parameters.
type invertStep struct{}

func init() { registerStep("invert", drawInvert) }

func drawInvert(*machine.Step, *rand.Rand, DrawContext) StepParams { return &invertStep{} }

func (p *invertStep) apply(se stepEnv, dst, x []float64) []float64 {
	return Invert{}.Apply(dst, x, se.fs)
}

func (p *invertStep) guard(stepEnv) string { return "" }

func (p *invertStep) Record() ledger.StepRecord { return stepRecord("invert", nil, nil) }
