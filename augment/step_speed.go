package augment

import (
	"math"
	"math/rand/v2"

	"thrum/machine"
	"thrum/machine/ledger"
)

// speedStep changes the machine's speed: the clip is resampled by Ratio
// (Speed). Percent is the drawn change; Ratio is 1 + Percent/100 clamped
// into the condition's band and out of every hold-out band (clampSpeed).
type speedStep struct {
	Percent, Ratio float64
}

func init() { registerStep("speed", drawSpeed) }

func drawSpeed(s *machine.Step, rng *rand.Rand, dc DrawContext) StepParams {
	pct := uniform(rng, s.Range, s.Increment)
	return &speedStep{Percent: pct, Ratio: clampSpeed(1+pct/100, dc.Condition, dc.HoldOutBands)}
}

func (p *speedStep) apply(se stepEnv, dst, x []float64) []float64 {
	if se.speedDone {
		return append(dst[:0], x...)
	}
	return Speed{Ratio: p.Ratio, Plans: se.plans}.Apply(dst, x, se.fs)
}

// guard: the ratio must lie in the condition's band and the clip's speed
// outside every hold-out band.
func (p *speedStep) guard(se stepEnv) string {
	reason := ""
	lo, hi := se.cond.SpeedBand()
	if p.Ratio < lo-1e-12 || p.Ratio > hi+1e-12 {
		reason = RejectSpeedBand
	}
	for _, b := range se.m.HoldOutBands(se.cond) {
		if rpm := se.cond.RPM * p.Ratio; rpm >= b[0] && rpm <= b[1] {
			reason = RejectHoldOut
		}
	}
	return reason
}

func (p *speedStep) Record() ledger.StepRecord {
	return stepRecord("speed", map[string]float64{"percent": p.Percent, "ratio": p.Ratio}, nil)
}

// SpeedRatio is the factor the step multiplies the shaft speed by.
func (p *speedStep) SpeedRatio() float64 { return p.Ratio }

// clampSpeed keeps a speed ratio inside the condition's band and out of
// every hold-out band: a ratio that would land in a hold-out band is pulled
// back towards 1 until it is just outside.
//
// The result is then rounded towards 1 to a multiple of 0.001: a ratio
// with a small denominator takes the resampler's exact polyphase path, and
// rounding towards 1 never leaves the band nor enters a hold-out band.
func clampSpeed(r float64, c *machine.Condition, holdOut [][2]float64) float64 {
	lo, hi := c.SpeedBand()
	r = math.Min(math.Max(r, lo), hi)
	for _, b := range holdOut {
		rpm := c.RPM * r
		if rpm >= b[0] && rpm <= b[1] {
			if r > 1 {
				r = math.Nextafter(b[0]/c.RPM, 0)
			} else {
				r = math.Nextafter(b[1]/c.RPM, 2)
			}
		}
	}
	return 1 + math.Trunc((r-1)*1000+1e-9*sign(r-1))/1000
}

func sign(x float64) float64 {
	if x < 0 {
		return -1
	}
	return 1
}
