package augment

import (
	"fmt"
	"math/rand/v2"

	"thrum/machine"
	"thrum/machine/ledger"
)

// irStep convolves the clip with a measured impulse response, File, drawn
// from the step's files. Apply sets the response's RT60 (T30), or why the
// T30 cannot be measured, or marks the file unusable.
type irStep struct {
	File string

	applied, unusable bool
	RT60              float64
	undefined         string
}

func init() { registerStep("ir", drawIR) }

func drawIR(s *machine.Step, rng *rand.Rand, _ DrawContext) StepParams {
	return &irStep{File: s.Files[rng.IntN(len(s.Files))]}
}

func (p *irStep) apply(se stepEnv, dst, x []float64) []float64 {
	ir := se.fileIR(p.File)
	if ir.err != nil {
		p.unusable = true
		return append(dst[:0], x...)
	}
	if ir.rt60Err != nil {
		p.undefined = fmt.Sprintf("impulse response %s: %v", p.File, ir.rt60Err)
	} else {
		p.applied, p.RT60 = true, ir.rt60
	}
	return ir.reverb.Apply(dst, x, se.fs)
}

// guard: the file must be a usable response at the working rate whose T30
// can be measured.
func (p *irStep) guard(stepEnv) string {
	if p.unusable {
		return RejectIR
	}
	if p.undefined != "" {
		return RejectRT60Unmeasurable
	}
	return ""
}

func (p *irStep) Record() ledger.StepRecord {
	var params map[string]float64
	if p.applied {
		params = map[string]float64{"rt60_s": p.RT60}
	}
	r := stepRecord("ir", params, map[string]string{"file": p.File})
	undefined(&r, "rt60_s", p.undefined)
	return r
}
