package augment

import (
	"math"
	"math/rand/v2"

	"thrum/machine"
	"thrum/machine/ledger"
)

// RejectNoRoomForTempo: the recording is shorter than the source span the
// variant's tempo (and speed) changes need to fill one clip, so the output
// would have to be padded; it is rejected instead.
const RejectNoRoomForTempo = "no-room-for-tempo"

// tempoStep changes the duration by Percent without changing pitch
// (Tempo). Non-physical: the record is marked. Out and In are the frames
// the step writes and reads, set by planTempo when the clip length is
// known: the last tempo step of a variant writes exactly one clip, each
// reads ⌈Out·(1 + Percent/100)⌉ plus the reach of WSOLA's last frame
// (tempoReach: 50 ms), so the variant's chain starts from a source span
// that many frames long (TempoSpan) and nothing is padded. Out 0 is the
// plain Tempo (round(len/factor) samples).
type tempoStep struct {
	Percent float64
	Out, In int64
}

func init() { registerStep("tempo", drawTempo) }

func drawTempo(s *machine.Step, rng *rand.Rand, _ DrawContext) StepParams {
	return &tempoStep{Percent: uniform(rng, s.Range, s.Increment)}
}

func (p *tempoStep) factor() float64 { return 1 + p.Percent/100 }

func (p *tempoStep) apply(se stepEnv, dst, x []float64) []float64 {
	t := Tempo{Factor: p.factor()}
	if p.Out > 0 && int64(len(x)) == p.In {
		return t.stretch(dst, x, se.fs, int(p.Out))
	}
	return t.Apply(dst, x, se.fs)
}

func (p *tempoStep) guard(stepEnv) string { return "" }

func (p *tempoStep) Record() ledger.StepRecord {
	r := stepRecord("tempo", map[string]float64{"percent": p.Percent}, nil)
	r.Nonphysical = true
	return r
}

// planTempo sets Out and In of the drawn tempo steps for a clip of n
// frames at fs Hz, from the last step back: the last writes n, each writes
// what the next one reads. Draw calls it once all steps are drawn; n ≤ 0
// or fs ≤ 0 (not known) leaves the steps plain.
func planTempo(drawn []Drawn, n int64, fs float64) {
	if n <= 0 || !(fs > 0) {
		return
	}
	need := n
	for i := len(drawn) - 1; i >= 0; i-- {
		p, ok := drawn[i].Params.(*tempoStep)
		if !ok {
			continue
		}
		p.Out = need
		p.In = int64(math.Ceil(float64(need)*p.factor()-1e-9)) + tempoReach(fs)
		need = p.In
	}
}

// TempoSpan returns the frames the variant's chain must start from so that
// its tempo steps give exactly n frames (planTempo), and whether the
// variant has a tempo step; n when it has none.
func TempoSpan(drawn []Drawn, n int64) (int64, bool) {
	for _, d := range drawn {
		if p, ok := d.Params.(*tempoStep); ok && p.In > 0 {
			return p.In, true
		}
	}
	return n, false
}
