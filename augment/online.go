package augment

import (
	"fmt"

	"thrum/machine"
	"thrum/machine/ledger"
)

// Online rendering: variants drawn from a seed the caller derives (a
// server's epoch and position) rather than from a variant index, and
// rendered by the same draw, steps, span and credibility guard as the
// expand stage. Nothing is written.

// Renderer renders variants of one machine's training clips. It holds the
// expand stage's per-machine state (the training backgrounds, the room and
// its microphone pool, the impulse-response cache) and is safe for
// concurrent use; each goroutine passes its own Scratch.
type Renderer struct {
	e *env
}

// NewRenderer builds the renderer of machine id. opt.Policy is required
// (split.TrainingPolicy), as for the stages; opt.Encoding decides the
// clip-protection scale as it does for written files (Float32 keeps a
// sensor recording's units).
func NewRenderer(p *machine.Plant, id string, opt Options) (*Renderer, error) {
	if err := opt.check(); err != nil {
		return nil, err
	}
	m := p.Machine(id)
	if m == nil {
		return nil, fmt.Errorf("augment: no machine %q in the plant", id)
	}
	e, err := newEnv(p, m, opt, &Plans{})
	if err != nil {
		return nil, err
	}
	return &Renderer{e: e}, nil
}

// Trains reports whether the expand stage gives clip c of recording r
// variants: a usable normal recording of this machine, in a condition that
// is not held out and has a recipe, and a training clip under the policy.
func (rd *Renderer) Trains(r *machine.Recording, c machine.Clip) bool {
	e := rd.e
	if r == nil || r.Machine != e.m.ID || !r.Usable() || r.Label != machine.LabelNormal {
		return false
	}
	cond := e.m.Condition(r.Condition)
	if cond == nil || cond.HoldOut || e.p.RecipeFor(e.m, cond) == nil {
		return false
	}
	return e.opt.Policy.Trains(r, c)
}

// Scratch is one goroutine's reusable buffers for Render.
type Scratch struct {
	ws workspace
	x  []float64
}

// Render draws the variant of clip c of r that seed gives and renders it.
// The entry is the one the expand stage would journal for it, without a
// variant index or path: the seed, the steps with their drawn and measured
// parameters, speed, backgrounds, the clip-protection scale, and the draw
// hash. When the guard rejects the draw the entry's Kind is
// ledger.KindRejected with its Reason, and no samples are returned. The
// samples live in s until its next use. A clip that is not a training clip
// (see Trains) is an error: no variant of it is ever made.
func (rd *Renderer) Render(s *Scratch, r *machine.Recording, c machine.Clip, seed uint64) ([]float64, ledger.Entry, error) {
	e := rd.e
	if !rd.Trains(r, c) {
		return nil, ledger.Entry{}, fmt.Errorf("augment: %s clip %d is no training clip of machine %s: no variant of it is made", r.Rel, c.Index, e.m.ID)
	}
	j := job{rec: r, m: e.m, c: e.m.Condition(r.Condition)}
	recipe := e.p.RecipeFor(j.m, j.c)
	x, err := rd.readClip(s, r, c)
	if err != nil {
		return nil, ledger.Entry{}, err
	}
	ent, err := e.seeded(j, recipe, c, seed)
	if err != nil {
		return nil, ent, err
	}
	y, ent, err := e.renderEntry(&s.ws, j, recipe, c, x, ent)
	if err != nil {
		return nil, ent, fmt.Errorf("augment: %s clip %d: %w", r.Rel, c.Index, err)
	}
	if ent.Kind == ledger.KindOutput && ledger.Check(&ent) != nil {
		// as the stage does: a value that is not finite rejects the variant
		ent = ledger.Defined(ent, "not finite")
		ent.Kind, ent.Reason = ledger.KindRejected, RejectNonFiniteValue
		y = nil
	}
	return y, ent, nil
}

// Clip returns training clip c of r as recorded (as ReadClips gives it),
// in s until its next use.
func (rd *Renderer) Clip(s *Scratch, r *machine.Recording, c machine.Clip) ([]float64, error) {
	if !rd.Trains(r, c) {
		return nil, fmt.Errorf("augment: %s clip %d is no training clip of machine %s", r.Rel, c.Index, rd.e.m.ID)
	}
	return rd.readClip(s, r, c)
}

func (rd *Renderer) readClip(s *Scratch, r *machine.Recording, c machine.Clip) ([]float64, error) {
	x, err := r.ReadSpan(s.x, c.Start, c.Frames-c.Pad)
	if err != nil {
		return nil, fmt.Errorf("augment: %s clip %d: %w", r.Rel, c.Index, err)
	}
	// a padded last clip ends in zeros, as ReadClips gives it
	x = append(x, make([]float64, c.Pad)...)
	s.x = x
	return x, nil
}
