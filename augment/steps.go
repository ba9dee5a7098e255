package augment

import (
	"fmt"
	"math/rand/v2"
	"sort"

	"thrum/machine"
	"thrum/machine/ledger"
)

// The step table. Every recipe step kind is defined in one file of its own,
// step_<kind>.go: a typed parameter struct and the function that draws it,
// registered here by the file's init. The struct applies the step, checks
// the result against the credibility guard and writes the step's ledger
// record. The keys a kind takes in plant.toml are checked by machine's step
// rules (machine/steps.go); TestStepTableMatchesConfig ties the two lists.

// StepParams are the typed parameters of one drawn step. Apply and guard
// are called once, in that order; after apply the parameters also hold the
// values measured on the way (re-measured SNR, RT60), which the guard checks
// and the record writes.
type StepParams interface {
	// apply runs the step on x into dst (nil or short allocates; its
	// capacity is reused) and returns the output.
	apply(se stepEnv, dst, x []float64) []float64
	// guard returns the rejection reason of the applied step (one of the
	// Reject… constants), or "" when the step is credible.
	guard(se stepEnv) string
	// Record returns the step's ledger record: the drawn parameters, and
	// the measured ones once applied.
	Record() ledger.StepRecord
}

// drawFunc draws one step's parameters from its recipe step. All the step's
// randomness is drawn here, from rng, in a fixed order.
type drawFunc func(s *machine.Step, rng *rand.Rand, dc DrawContext) StepParams

// stepKinds is the table: step kind → draw.
var stepKinds = map[string]drawFunc{}

// registerStep adds a step kind to the table; each step_<kind>.go calls it
// from init.
func registerStep(kind string, draw drawFunc) {
	if _, dup := stepKinds[kind]; dup {
		panic("augment: step kind " + kind + " registered twice")
	}
	stepKinds[kind] = draw
}

// StepKinds lists the step kinds augment can draw and apply, sorted.
func StepKinds() []string {
	out := make([]string, 0, len(stepKinds))
	for k := range stepKinds {
		out = append(out, k)
	}
	sort.Strings(out)
	return out
}

// stepEnv is what applying and guarding a step needs besides its
// parameters: the machine's shared state, the recipe step drawn and the
// clip's condition.
type stepEnv struct {
	*env
	step *machine.Step
	cond *machine.Condition
	// speedDone: the samples already carry the variant's speed change.
	speedDone bool
}

// Drawn is one step of a variant with its exact drawn parameters.
type Drawn struct {
	Step   *machine.Step
	Params StepParams
}

// Record returns the step's ledger record.
func (d Drawn) Record() ledger.StepRecord { return d.Params.Record() }

// Draw draws one variant of a recipe: how many steps (MinSteps … MaxSteps),
// which (keeping their recipe order), and every parameter inside its range.
// All randomness a variant needs is drawn here, so the records fully describe
// the variant before any sample is touched. A step kind not in the table is
// an error.
func Draw(r *machine.Recipe, rng *rand.Rand, dc DrawContext) ([]Drawn, error) {
	for i := range r.Steps {
		if stepKinds[r.Steps[i].Kind] == nil {
			return nil, fmt.Errorf("augment: recipe %s: step[%d]: unknown step kind %q", r.ID, i, r.Steps[i].Kind)
		}
	}
	k := r.MinSteps + rng.IntN(r.MaxSteps-r.MinSteps+1)
	idx := rng.Perm(len(r.Steps))[:k]
	sort.Ints(idx)
	out := make([]Drawn, 0, k)
	for _, i := range idx {
		s := &r.Steps[i]
		out = append(out, Drawn{Step: s, Params: stepKinds[s.Kind](s, rng, dc)})
	}
	guardSpeedTotals(out, dc)
	planTempo(out, dc.ClipFrames, dc.SampleRate)
	return out, nil
}

// records returns the ledger records of drawn steps.
func records(drawn []Drawn) []ledger.StepRecord {
	out := make([]ledger.StepRecord, len(drawn))
	for i := range drawn {
		out[i] = drawn[i].Record()
	}
	return out
}

// stepRecord builds a ledger record; empty maps are left out of the line.
func stepRecord(kind string, params map[string]float64, text map[string]string) ledger.StepRecord {
	if len(params) == 0 {
		params = nil
	}
	if len(text) == 0 {
		text = nil
	}
	return ledger.StepRecord{Kind: kind, Params: params, Text: text}
}

// speedChanger is a step that changes the machine's shaft speed.
type speedChanger interface {
	// SpeedRatio is the factor the step multiplies the shaft speed by.
	SpeedRatio() float64
	// SpeedDrawn is the factor drawn for the step, before clamping.
	SpeedDrawn() float64
	// SpeedTotal is the variant's speed ratio after the step: the
	// product of SpeedRatio over the speed steps so far, exactly as
	// clamped (0 when the step was not drawn by Draw).
	SpeedTotal() float64
}

// SpeedOf returns the total speed ratio applied by drawn steps: the clip's
// shaft rate is the condition's rpm/60 times it. It is the last speed
// step's clamped total (which the steps' ratios multiply to, up to
// rounding), or the product of the ratios when no total was set; 1 when
// there is no speed step.
func SpeedOf(drawn []Drawn) float64 {
	r, total := 1.0, 0.0
	for _, d := range drawn {
		if s, ok := d.Params.(speedChanger); ok {
			r *= s.SpeedRatio()
			total = s.SpeedTotal()
		}
	}
	if total > 0 {
		return total
	}
	return r
}

// ResampledSpeedOf returns the speed ratio the clip is resampled by: that
// of SpeedOf when the speed steps resample (the default mode), 1 when they
// are order-aware (those change the clip in place; a recipe's speed steps
// share one mode).
func ResampledSpeedOf(drawn []Drawn) float64 {
	for _, d := range drawn {
		if s, ok := d.Params.(*speedStep); ok && !s.resamples() {
			return 1
		}
	}
	return SpeedOf(drawn)
}

// SpeedDrawnOf returns the product of the speed ratios drawn by the steps
// before clamping, and whether there is a speed step at all.
func SpeedDrawnOf(drawn []Drawn) (float64, bool) {
	r, any := 1.0, false
	for _, d := range drawn {
		if s, ok := d.Params.(speedChanger); ok {
			r *= s.SpeedDrawn()
			any = true
		}
	}
	return r, any
}

// backgroundMixer is a step that mixes in one of the plant's background
// recordings.
type backgroundMixer interface {
	// BackgroundID is the id of the recording mixed in, "" when none
	// (synthesised plant noise).
	BackgroundID() string
}

// BackgroundsOf lists the background ids mixed in by drawn steps.
func BackgroundsOf(drawn []Drawn) []string {
	var out []string
	for _, d := range drawn {
		if b, ok := d.Params.(backgroundMixer); ok && b.BackgroundID() != "" {
			out = append(out, b.BackgroundID())
		}
	}
	return out
}

// weightingName is the ledger's name of a step's level weighting.
func weightingName(w string) string {
	if w == "A" {
		return "A"
	}
	return "none"
}

// weighting turns a weighting name back into the Weighting.
func weighting(s string) Weighting {
	if s == "A" {
		return WeightA
	}
	return WeightNone
}
