package augment

import (
	"math"
	"math/rand/v2"

	"thrum/machine"
	"thrum/machine/ledger"
)

// filterStep filters the clip (Filter): Type is lowpass, highpass, bandpass
// or telephone (300 … 3400 Hz); LowHz and HighHz are the edges the type
// uses, Q the biquad Q (1/√2 when the recipe sets none) and Order the
// Butterworth order (0: one biquad).
type filterStep struct {
	Type          string
	Order         int
	Q             float64
	LowHz, HighHz float64
}

func init() { registerStep("filter", drawFilter) }

func drawFilter(s *machine.Step, rng *rand.Rand, _ DrawContext) StepParams {
	p := &filterStep{Type: s.Mode, Order: s.Order, Q: s.Q}
	if p.Q == 0 {
		p.Q = 1 / math.Sqrt2
	}
	switch s.Mode {
	case "telephone":
		p.LowHz, p.HighHz = 300, 3400
	case "lowpass":
		p.HighHz = uniform(rng, s.Range, s.Increment)
	case "highpass":
		p.LowHz = uniform(rng, s.Range, s.Increment)
	case "bandpass":
		a, b := uniform(rng, s.Range, s.Increment), uniform(rng, s.Range, s.Increment)
		if a > b {
			a, b = b, a
		}
		if b < a*1.2 {
			b = math.Min(a*1.2, s.Range[1])
			a = b / 1.2
		}
		p.LowHz, p.HighHz = a, b
	}
	return p
}

func (p *filterStep) apply(se stepEnv, dst, x []float64) []float64 {
	return Filter{Type: p.Type, Low: p.LowHz, High: p.HighHz, Q: p.Q, Order: p.Order}.Apply(dst, x, se.fs)
}

func (p *filterStep) guard(stepEnv) string { return "" }

func (p *filterStep) Record() ledger.StepRecord {
	params := map[string]float64{"order": float64(p.Order), "q": p.Q}
	switch p.Type {
	case "telephone", "bandpass":
		params["low_hz"], params["high_hz"] = p.LowHz, p.HighHz
	case "lowpass":
		params["high_hz"] = p.HighHz
	case "highpass":
		params["low_hz"] = p.LowHz
	}
	return stepRecord("filter", params, map[string]string{"type": p.Type})
}
