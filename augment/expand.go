package augment

import (
	"context"
	"fmt"

	"thrum/machine"
	"thrum/machine/ledger"
	"thrum/machine/wavio"
)

// Expand runs the expand stage: every usable recording's clips are written
// as recorded outputs, and each clip of a normal, non-hold-out condition gets
// its recipe's variants. A rerun verifies and skips outputs whose ledger
// entry and file hash match, so an interrupted run resumes to the same result.
func Expand(ctx context.Context, inv *machine.Inventory, opt Options) ([]Summary, error) {
	return runStage(ctx, inv, opt, ledger.Expand)
}

func (e *env) expandJob(ctx context.Context, j job) jobResult {
	res := jobResult{job: j}
	r := j.rec
	recipe := e.p.RecipeFor(j.m, j.c)
	augmentable := r.Label == machine.LabelNormal && !j.c.HoldOut && recipe != nil
	st := stem(r)
	folder := "recorded"
	if r.Label == machine.LabelAnomalous {
		folder = "anomalous"
	}
	trains := func(c machine.Clip) bool { return augmentable && e.opt.Policy.Trains(r, c) }
	// A rerun whose every output of this recording still verifies takes
	// them as they are, without reading the recording.
	if es, ok, err := e.allReused(j, recipe, trains, folder, st); err != nil {
		res.err = fmt.Errorf("augment: %s: %w", r.Rel, err)
		return res
	} else if ok {
		res.entries, res.reused = es, len(es)
		return res
	}
	scratch := &workspace{}
	err := r.ReadClipsOf(j.clips(), e.counted(&res, func(c machine.Clip, x []float64) error {
		if err := ctx.Err(); err != nil {
			return err
		}
		ent := e.recordedEntry(r, c, folder, st)
		if !e.reuse(&res, ent) {
			y := x
			if r.BeyondFullScale && e.encoding() != wavio.Float32 {
				// Sensor data beyond ±1 would clip in PCM: the clip is
				// scaled into range and the factor recorded.
				y = append(scratch.recorded[:0], x...)
				scratch.recorded = y
				ent.Scale = Protect(y)
			}
			if err := e.emit(&res, ent, y); err != nil {
				return err
			}
		}
		if !trains(c) {
			return nil
		}
		for v := 0; v < recipe.Variants; v++ {
			want, err := e.variant(j, recipe, c, v, st)
			if err != nil {
				return err
			}
			if e.reuse(&res, want) {
				continue
			}
			y, ent, err := e.render(scratch, j, recipe, c, x, v, st)
			if err != nil {
				return err
			}
			if err := e.emit(&res, ent, y); err != nil {
				return err
			}
		}
		return nil
	}))
	if err != nil {
		res.err = fmt.Errorf("augment: %s: %w", r.Rel, err)
	}
	return res
}

// recordedEntry is the ledger entry of a clip's recorded output as far as
// the clip determines it.
func (e *env) recordedEntry(r *machine.Recording, c machine.Clip, folder, st string) ledger.Entry {
	ent := e.base(r, c)
	ent.Stage = ledger.Expand
	ent.Origin = machine.OriginRecorded
	ent.Variant = -1
	ent.Seed = 0
	ent.Path = fmt.Sprintf("%s/%s/%s/%s-c%04d.wav", r.Machine, r.Condition, folder, st, c.Index)
	return ent
}

// allReused returns the previous entries of every output of a job, in the
// order the job makes them, when each of them still holds (see reusable);
// ok is false as soon as one does not.
func (e *env) allReused(j job, recipe *machine.Recipe, trains func(machine.Clip) bool, folder, st string) (es []ledger.Entry, ok bool, err error) {
	if len(e.previous) == 0 || len(j.clips()) == 0 {
		return nil, false, nil
	}
	for _, c := range j.clips() {
		old, ok := e.reusable(e.recordedEntry(j.rec, c, folder, st))
		if !ok {
			return nil, false, nil
		}
		es = append(es, old)
		if !trains(c) {
			continue
		}
		for v := 0; v < recipe.Variants; v++ {
			want, err := e.variant(j, recipe, c, v, st)
			if err != nil {
				return nil, false, err
			}
			old, ok := e.reusable(want)
			if !ok {
				return nil, false, nil
			}
			es = append(es, old)
		}
	}
	return es, true, nil
}

// variant draws variant v of a clip and returns its ledger entry as far as
// the draw determines it (no samples computed).
func (e *env) variant(j job, recipe *machine.Recipe, c machine.Clip, v int, st string) (ledger.Entry, error) {
	r := j.rec
	ent, err := e.seeded(j, recipe, c, VariantSeed(e.p.Seed, r.Machine, r.SHA256, c.Index, v, "variant"))
	if err != nil {
		return ledger.Entry{}, err
	}
	ent.Variant = v
	ent.Path = fmt.Sprintf("%s/%s/augmented/%s-c%04d-v%02d.wav", r.Machine, r.Condition, st, c.Index, v)
	return ent, nil
}

// seeded draws the variant of a clip a seed gives and returns its entry
// as far as the draw determines it: no variant index, no path (the
// expand stage's variant adds both; a served variant has neither).
func (e *env) seeded(j job, recipe *machine.Recipe, c machine.Clip, seed uint64) (ledger.Entry, error) {
	drawn, err := Draw(recipe, NewRand(seed), e.drawContext(j, c))
	if err != nil {
		return ledger.Entry{}, err
	}
	ent := e.base(j.rec, c)
	ent.Stage = ledger.Expand
	ent.Origin = machine.OriginAugmented
	ent.Seed = seed
	ent.Draw = drawHash(drawnMarked(drawn))
	return ent, nil
}

func (e *env) drawContext(j job, c machine.Clip) DrawContext {
	return DrawContext{Machine: j.m, Condition: j.c, HoldOutBands: j.m.HoldOutBands(j.c),
		Backgrounds: e.bgIDs, BackgroundFrames: e.bgFrames, MicPositions: len(e.mics), ClipFrames: c.Frames, SampleRate: e.fs}
}

// render computes variant v of a clip: the samples and the complete entry
// (measured values, clip-protection scale, or the rejection reason).
func (e *env) render(ws *workspace, j job, recipe *machine.Recipe, c machine.Clip, x []float64, v int, st string) ([]float64, ledger.Entry, error) {
	ent, err := e.variant(j, recipe, c, v, st)
	if err != nil {
		return nil, ent, err
	}
	return e.renderEntry(ws, j, recipe, c, x, ent)
}

// renderEntry computes the variant a drawn entry (from variant or seeded)
// describes: it draws again from the entry's seed (the steps keep what
// they measure while applying, so each render gets its own draw) and
// fills in the samples, measured values and scale, or the rejection.
func (e *env) renderEntry(ws *workspace, j job, recipe *machine.Recipe, c machine.Clip, x []float64, ent ledger.Entry) ([]float64, ledger.Entry, error) {
	drawn, err := Draw(recipe, NewRand(ent.Seed), e.drawContext(j, c))
	if err != nil {
		return nil, ent, err
	}
	ent.Speed = SpeedOf(drawn)
	if r, ok := SpeedDrawnOf(drawn); ok {
		ent.SpeedDrawn = r
	}
	ent.Backgrounds = BackgroundsOf(drawn)
	speedDone := false
	// one clip length after the speed and tempo changes: read the source
	// span they need
	span, tempo := TempoSpan(drawn, c.Frames)
	reject := func(reason string) ([]float64, ledger.Entry, error) {
		ent.Steps = records(drawn)
		ent.Kind = ledger.KindRejected
		ent.Reason = reason
		ent.Path = ""
		return nil, ent, nil
	}
	noRoom := RejectNoRoomForSpeed
	if tempo {
		noRoom = RejectNoRoomForTempo
	}
	switch rs := ResampledSpeedOf(drawn); {
	case rs != 1:
		xs, sp, ok, err := e.speedSource(ws, j.rec, c, span, rs)
		if err != nil {
			return nil, ent, err
		}
		if !ok {
			return reject(noRoom)
		}
		x, speedDone = xs, true
		ent.ClipStart, ent.ClipFrames = sp.Start, sp.Frames
	case tempo:
		xs, start, ok, err := e.tempoSource(ws, j.rec, c, span)
		if err != nil {
			return nil, ent, err
		}
		if !ok {
			return reject(noRoom)
		}
		x = xs
		ent.ClipStart, ent.ClipFrames = start, span
	}
	y, applied, reason := e.apply(ws, x, drawn, j.c, speedDone)
	ent.Steps = applied
	if reason != "" {
		ent.Kind = ledger.KindRejected
		ent.Reason = reason
		ent.Path = ""
		return nil, ent, nil
	}
	ent.Scale = e.fit(j.rec, y)
	return y, ent, nil
}
