package augment

import (
	"fmt"
	"math"
	"sort"
	"sync"

	"thrum/augment/room"
	"thrum/machine"
	"thrum/machine/ledger"
	"thrum/machine/pool"
	"thrum/machine/wavio"
)

// The per-machine state of a stage run: allowed backgrounds, the room and
// its microphone pool, and the impulse-response cache.

// env is the per-machine state shared by workers: read-only after newEnv
// except for the lazily filled caches, which are guarded.
type env struct {
	p        *machine.Plant
	m        *machine.Machine
	opt      Options
	fs       float64
	bgIDs    []string
	bgFrames map[string]int64
	previous map[string]ledger.Entry
	journal  *ledger.Journal
	// batch makes the stage's outputs durable together; an output's
	// journal line follows once it is in place
	batch    *machine.Batch
	progress *pool.Reporter

	plans *Plans

	mu sync.Mutex
	bg map[string][]float64
	// bgBad holds the sample problem of a background whose samples cannot
	// be mixed (all zero, non-finite, absurd); bgPath its file.
	bgBad  map[string]*machine.SampleError
	bgPath map[string]string
	irs    map[string]*irEntry
	room   *room.Room
	mics   [][3]float64
}

// irEntry caches an impulse response. Only the samples are kept: the FFT
// convolver (kernel spectra and scratch, several times larger) is built per
// use, so memory does not grow with how many positions a run happens to use.
type irEntry struct {
	once     sync.Once
	ir       []float64
	distance float64
	reverb   room.Reverb // measured responses only
	rt60     float64
	rt60Err  error // why rt60 could not be measured
	err      error
}

func newEnv(p *machine.Plant, m *machine.Machine, opt Options, plans *Plans) (*env, error) {
	e := &env{p: p, m: m, opt: opt, fs: float64(p.SampleRate),
		bgFrames: map[string]int64{}, bg: map[string][]float64{}, bgBad: map[string]*machine.SampleError{}, bgPath: map[string]string{}, irs: map[string]*irEntry{}, plans: plans}
	for _, id := range opt.Policy.Backgrounds() {
		for _, b := range p.Backgrounds {
			if b.ID != id || (b.Room != "" && m.Room != "" && b.Room != m.Room) {
				continue
			}
			a, err := wavio.ReadFile(p.Resolve(b.Path))
			if err != nil {
				return nil, fmt.Errorf("augment: background %s: %w", b.ID, err)
			}
			mono := a.Mono(nil)
			if a.Format.SampleRate != p.SampleRate {
				// Backgrounds at another rate are resampled like recordings.
				mono = machine.Resample(nil, mono, a.Format.SampleRate, p.SampleRate)
			}
			e.bg[id] = mono
			e.bgPath[id] = b.Path
			if bad := machine.CheckSamples(a.Data, a.Format.Channels); bad != nil {
				e.bgBad[id] = bad
			}
			e.bgFrames[id] = int64(len(mono))
			e.bgIDs = append(e.bgIDs, id)
		}
	}
	sort.Strings(e.bgIDs)
	if m.Room != "" {
		pr := p.Room(m.Room)
		rr, err := toRoom(pr)
		if err != nil {
			return nil, fmt.Errorf("augment: machine %s: %w", m.ID, err)
		}
		e.room = &rr
		if z := p.Zone(m.Zone); z != nil {
			rng := NewRand(VariantSeed(p.Seed, m.ID, "", 0, 0, "microphone-pool"))
			var lo, hi [3]float64
			copy(lo[:], z.Min)
			copy(hi[:], z.Max)
			for i := 0; i < DefaultMicPositions; i++ {
				e.mics = append(e.mics, room.DrawPoint(rng, lo, hi))
			}
		}
	}
	return e, nil
}

func toRoom(pr *machine.Room) (room.Room, error) {
	var r room.Room
	copy(r.Size[:], pr.Size)
	copy(r.Absorption[:], pr.Absorption)
	if len(pr.OctaveAbsorption) > 0 {
		r.Octave = map[int][6]float64{}
		for k, v := range pr.OctaveAbsorption {
			var f int
			fmt.Sscan(k, &f)
			var w [6]float64
			copy(w[:], v)
			r.Octave[f] = w
		}
	}
	if len(pr.RT60) > 0 {
		r.RT60 = map[int]float64{}
		for k, v := range pr.RT60 {
			var f int
			fmt.Sscan(k, &f)
			r.RT60[f] = v
		}
	}
	if pr.TemperatureC != nil {
		r.TemperatureC = *pr.TemperatureC
	}
	return r, r.Validate()
}

// cachedIR returns the cache entry for key, filled once by fill.
func (e *env) cachedIR(key string, fill func(*irEntry)) *irEntry {
	e.mu.Lock()
	ent := e.irs[key]
	if ent == nil {
		ent = &irEntry{}
		e.irs[key] = ent
	}
	e.mu.Unlock()
	ent.once.Do(func() { fill(ent) })
	return ent
}

func (e *env) roomIR(i int) *irEntry {
	return e.cachedIR(fmt.Sprintf("mic:%d", i), func(ent *irEntry) {
		if e.room == nil || i >= len(e.mics) {
			ent.err = fmt.Errorf("augment: machine %s has no room and zone", e.m.ID)
			return
		}
		var src [3]float64
		copy(src[:], e.m.Position)
		// The diffuse tail's noise is seeded per machine and microphone
		// position, like the positions themselves, so the response is
		// the same in every run, worker and shard and can be shared by
		// the variants that draw the position.
		tail := NewRand(VariantSeed(e.p.Seed, e.m.ID, "", i, 0, "room-tail"))
		h, err := room.ImpulseResponse(nil, *e.room, src, e.mics[i], e.fs, room.Config{}, tail)
		if err != nil {
			ent.err = err
			return
		}
		ent.rt60, ent.rt60Err = room.T30(h, e.fs)
		// The recording is the machine's sound as heard near it: scale the
		// response so its direct path has unit gain (×4πd), and the step
		// adds the room's reflections at the drawn position instead of
		// turning the level down by the free-field 1/(4πd).
		mic := e.mics[i]
		d := math.Sqrt((src[0]-mic[0])*(src[0]-mic[0]) + (src[1]-mic[1])*(src[1]-mic[1]) + (src[2]-mic[2])*(src[2]-mic[2]))
		scale := 4 * math.Pi * math.Max(d, room.MinDistance)
		for k := range h {
			h[k] *= scale
		}
		ent.ir = h
		ent.distance = d
	})
}

func (e *env) fileIR(file string) *irEntry {
	return e.cachedIR("file:"+file, func(ent *irEntry) {
		a, err := wavio.ReadFile(e.p.Resolve(file))
		if err != nil {
			ent.err = err
			return
		}
		if a.Format.SampleRate != e.p.SampleRate {
			ent.err = fmt.Errorf("augment: impulse response %s: sample rate %d Hz, working rate %d Hz", file, a.Format.SampleRate, e.p.SampleRate)
			return
		}
		h := room.UnitEnergy(a.Mono(nil))
		// measured responses are few: keep the convolver (kernel spectra)
		ent.reverb = room.NewReverb(h, e.fs)
		ent.rt60, ent.rt60Err = room.T30(h, e.fs)
		ent.ir = h
	})
}
