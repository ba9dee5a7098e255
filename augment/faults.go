package augment

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"

	"thrum/augment/fault"
	"thrum/machine"
	"thrum/machine/ledger"
)

// Faults runs the faults stage: for every normal clip of a non-hold-out
// condition of a machine with a fault plan, it writes labelled synthetic
// fault cues (training only, origin synthetic-fault). The cue's rates come
// from the bearing and gear geometry and the clip's actual shaft rate: the
// condition's rpm times the speed ratio drawn for the fault file (inside the
// condition's band, out of hold-out bands), applied to the clip first.
func Faults(ctx context.Context, inv *machine.Inventory, opt Options) ([]Summary, error) {
	return runStage(ctx, inv, opt, ledger.Faults)
}

func (e *env) faultJob(ctx context.Context, j job) jobResult {
	res := jobResult{job: j}
	r := j.rec
	plan := j.m.Faults
	if plan == nil || r.Label != machine.LabelNormal || j.c.HoldOut || len(plan.Kinds) == 0 {
		return res
	}
	trains := false
	for _, c := range j.clips() {
		trains = trains || e.opt.Policy.Trains(r, c)
	}
	if !trains {
		return res
	}
	st := stem(r)
	err := r.ReadClipsOf(j.clips(), e.counted(&res, func(c machine.Clip, x []float64) error {
		if err := ctx.Err(); err != nil {
			return err
		}
		if !e.opt.Policy.Trains(r, c) {
			return nil
		}
		for ki, kind := range plan.Kinds {
			for k := 0; k < plan.PerClip; k++ {
				ent, _, err := e.faultDraw(j, c, ki, k, kind, st)
				if err != nil {
					return err
				}
				if e.reuse(&res, ent) {
					continue
				}
				y, ent, err := e.faultRender(j, c, x, ki, k, kind, st)
				if err != nil {
					return err
				}
				if err := e.emit(&res, ent, y); err != nil {
					return err
				}
			}
		}
		return nil
	}))
	if err != nil {
		res.err = fmt.Errorf("augment: faults: %s: %w", r.Rel, err)
	}
	return res
}

type faultDrawn struct {
	ratio, sev, resHz float64
	cue               fault.Cue
	rng               *rand.Rand
}

// faultDraw draws fault file k of kind (index ki) for a clip and returns its
// entry as far as the draw determines it.
func (e *env) faultDraw(j job, c machine.Clip, ki, k int, kind, st string) (ledger.Entry, *faultDrawn, error) {
	r := j.rec
	plan := j.m.Faults
	// The speed of a fault file is drawn like the recipe's speed step (its
	// range and increment), else inside the condition's band in 0.5 % steps.
	speedRange, inc := []float64{-j.c.BandPercent, j.c.BandPercent}, 0.5
	if rc := e.p.RecipeFor(j.m, j.c); rc != nil {
		for _, s := range rc.Steps {
			if s.Kind == "speed" {
				speedRange, inc = s.Range, s.Increment
			}
		}
	}
	v := ki*plan.PerClip + k
	seed := VariantSeed(e.p.Seed, r.Machine, r.SHA256, c.Index, v, "fault:"+kind)
	rng := NewRand(seed)
	d := &faultDrawn{rng: rng}
	d.ratio = clampSpeed(1+uniform(rng, speedRange, inc)/100, j.c, j.m.HoldOutBands(j.c))
	d.sev = uniform(rng, plan.SeverityDB, 0)
	d.resHz = uniform(rng, plan.ResonanceHz, 0)
	cue, label, err := e.cue(kind, j, d.ratio, d.sev, d.resHz, rng)
	if err != nil {
		return ledger.Entry{}, nil, fmt.Errorf("machine %s fault %s: %w", j.m.ID, kind, err)
	}
	d.cue = cue
	steps := []ledger.StepRecord{(&speedStep{Percent: (d.ratio - 1) * 100, Ratio: d.ratio}).Record()}
	ent := e.base(r, c)
	ent.Stage = ledger.Faults
	ent.Origin = machine.OriginSyntheticFault
	ent.Label = machine.LabelAnomalous
	ent.Variant = v
	ent.Seed = seed
	ent.Speed = d.ratio
	ent.Steps = steps
	ent.Fault = &ledger.FaultRecord{Kind: kind, Frequencies: label.Frequencies, ShaftHz: label.ShaftHz,
		SeverityDB: d.sev, ResonanceHz: label.ResonanceHz, Seed: seed}
	if b := label.Bearing; b != nil {
		ent.Fault.Bearing = &ledger.BearingRecord{Index: b.Index, Name: b.Name}
	}
	ent.Draw = drawHash(spanMarked(append(steps, ledger.StepRecord{Kind: kind, Params: map[string]float64{"severity_db": d.sev, "resonance_hz": d.resHz}}), d.ratio))
	ent.Path = fmt.Sprintf("%s/%s/faults/%s-c%04d-%s-%02d.wav", r.Machine, r.Condition, st, c.Index, kind, k)
	return ent, d, nil
}

// faultRender computes a fault file: the clip at the drawn speed plus the cue.
func (e *env) faultRender(j job, c machine.Clip, x []float64, ki, k int, kind, st string) ([]float64, ledger.Entry, error) {
	ent, d, err := e.faultDraw(j, c, ki, k, kind, st)
	if err != nil {
		return nil, ent, err
	}
	var y []float64
	if d.ratio != 1 {
		// one clip length after the change: read the source span it needs
		xs, sp, ok, err := e.speedSource(&workspace{}, j.rec, c, c.Frames, d.ratio)
		if err != nil {
			return nil, ent, err
		}
		if !ok {
			ent.Kind = ledger.KindRejected
			ent.Reason = RejectNoRoomForSpeed
			ent.Path = ""
			return nil, ent, nil
		}
		y = append([]float64(nil), xs...)
		ent.ClipStart, ent.ClipFrames = sp.Start, sp.Frames
	} else {
		y = Speed{Ratio: d.ratio, Plans: e.plans}.Apply(nil, x, e.fs)
	}
	y, _, err = fault.Add(y, y, e.fs, d.cue, d.rng)
	if err != nil {
		ent.Kind = ledger.KindRejected
		ent.Reason = RejectSilent
		ent.Path = ""
		return nil, ent, nil
	}
	ent.Scale = e.fit(j.rec, y)
	return y, ent, nil
}

// cue builds the fault cue of a kind at the clip's actual rates: input shaft
// rate = rpm/60 × ratio, other shafts through the gear stages.
func (e *env) cue(kind string, j job, ratio, sevDB, resHz float64, rng interface{ IntN(int) int }) (fault.Cue, fault.Label, error) {
	m := j.m
	input := machine.ShaftHz(j.c.RPM) * ratio
	shafts := m.ShaftRates(input)
	plan := m.Faults
	jitter := *plan.JitterPercent / 100
	var c fault.Cue
	switch kind {
	case fault.KindOuterRace, fault.KindInnerRace, fault.KindBall, fault.KindCage:
		bi := rng.IntN(len(m.Bearings))
		b := m.Bearings[bi]
		fr := shafts[b.Shaft]
		rates := b.Rates(fr)
		defect := map[string]float64{fault.KindOuterRace: rates.BPFO, fault.KindInnerRace: rates.BPFI,
			fault.KindBall: rates.BallPass(), fault.KindCage: rates.FTF}[kind]
		c = fault.Bearing{Kind: kind, ShaftHz: fr, DefectHz: defect, CageHz: rates.FTF, ResonanceHz: resHz,
			Damping: plan.Damping, JitterFrac: jitter, SeverityDB: sevDB, Of: &fault.BearingRef{Index: bi, Name: b.Name}}
	case fault.KindImpact:
		c = fault.Impact{Count: 1 + rng.IntN(4), ShaftHz: input, ResonanceHz: resHz, Damping: plan.Damping, SeverityDB: sevDB}
	case fault.KindImbalance, fault.KindMisalignment:
		c = fault.Orders{Kind: kind, ShaftHz: input, SeverityDB: sevDB}
	case fault.KindGearTooth:
		mesh := m.MeshHz(input)
		s := rng.IntN(len(mesh))
		faulty := shafts[s+rng.IntN(2)]
		c = fault.GearTooth{MeshHz: mesh[s], FaultShaftHz: faulty, SeverityDB: sevDB}
	default:
		return nil, fault.Label{}, fmt.Errorf("unknown fault kind %q", kind)
	}
	if v, ok := c.(interface{ Validate(float64) error }); ok {
		if err := v.Validate(e.fs); err != nil {
			return nil, fault.Label{}, err
		}
	}
	l := c.Label()
	if math.IsNaN(l.ShaftHz) {
		return nil, l, fmt.Errorf("fault: bad shaft rate")
	}
	return c, l, nil
}
