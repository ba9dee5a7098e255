package augment

import (
	"fmt"
	"math/rand/v2"

	"thrum/augment/room"
	"thrum/machine"
	"thrum/machine/ledger"
)

// roomStep places the microphone at position Mic of the machine's pool
// (drawn in its zone) and convolves the clip with the room's image-method
// response from the machine to it. Apply sets the position, its distance,
// and the response's RT60 (T30), or why the T30 cannot be measured, or
// marks the response unusable.
type roomStep struct {
	Mic int

	applied, unusable bool
	MicAt             [3]float64
	RT60, DistanceM   float64
	undefined         string
}

// DefaultMicPositions is the size of a machine's microphone-position pool:
// positions are drawn once per machine inside its zone and each variant picks
// one, so their impulse responses are computed once and shared.
const DefaultMicPositions = 16

func init() { registerStep("room", drawRoom) }

func drawRoom(_ *machine.Step, rng *rand.Rand, dc DrawContext) StepParams {
	n := dc.MicPositions
	if n <= 0 {
		n = DefaultMicPositions
	}
	return &roomStep{Mic: rng.IntN(n)}
}

func (p *roomStep) apply(se stepEnv, dst, x []float64) []float64 {
	ir := se.roomIR(p.Mic)
	if ir.err != nil {
		p.unusable = true
		return append(dst[:0], x...)
	}
	p.applied = true
	p.MicAt = se.mics[p.Mic]
	p.DistanceM = ir.distance
	if ir.rt60Err != nil {
		p.undefined = fmt.Sprintf("room %s, microphone %d: %v", se.m.Room, p.Mic, ir.rt60Err)
	} else {
		p.RT60 = ir.rt60
	}
	return room.NewReverb(ir.ir, se.fs).Apply(dst, x, se.fs)
}

// guard: the response must be usable, its RT60 measurable and inside the
// room's rt60_range.
func (p *roomStep) guard(se stepEnv) string {
	if p.unusable {
		return RejectIR
	}
	if p.undefined != "" {
		return RejectRT60Unmeasurable
	}
	pr := se.p.Room(se.m.Room)
	if p.RT60 < pr.RT60Range[0] || p.RT60 > pr.RT60Range[1] {
		return RejectRT60
	}
	return ""
}

func (p *roomStep) Record() ledger.StepRecord {
	params := map[string]float64{"mic": float64(p.Mic)}
	if p.applied {
		params["mic_x"], params["mic_y"], params["mic_z"] = p.MicAt[0], p.MicAt[1], p.MicAt[2]
		params["distance_m"] = p.DistanceM
		if p.undefined == "" {
			params["rt60_s"] = p.RT60
		}
	}
	r := stepRecord("room", params, nil)
	undefined(&r, "rt60_s", p.undefined)
	return r
}
