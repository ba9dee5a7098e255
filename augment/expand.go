package augment

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"hash/fnv"
	"path"
	"path/filepath"
	"sort"
	"strings"
	"sync"

	"thrum/augment/room"
	"thrum/machine"
	"thrum/machine/ledger"
	"thrum/machine/pool"
	"thrum/machine/wavio"
)

// Shard selects a deterministic share of the work: job j (a machine and
// recording) belongs to shard I of N when a hash of its key is I modulo N.
type Shard struct{ I, N int }

// Has reports whether the shard owns a work key.
func (s Shard) Has(key string) bool {
	if s.N <= 1 {
		return true
	}
	h := fnv.New64a()
	h.Write([]byte(key))
	return int(h.Sum64()%uint64(s.N)) == s.I
}

// Policy is the evaluation-safety policy the expand and faults stages
// follow: split.TrainingPolicy(plant) builds it from the plant, so the
// stages make variants and fault cues only where the split will train.
type Policy interface {
	// Trains reports whether a group of normal recordings will be a
	// training group; variants and fault cues are made only for those (the
	// split would exclude the others).
	Trains(machineID, group string) bool
	// Backgrounds returns the ids of the background files a training
	// variant may mix in: the training share of the background partition.
	// Empty: plant noise is synthesised instead.
	Backgrounds() []string
}

// Options configure the expand and faults stages. Out and Policy are
// required: the stages refuse to run without them.
type Options struct {
	// Out is the output root; it must not be inside the recordings root.
	Out string
	// Policy decides which groups get variants and fault cues and which
	// backgrounds they may mix in (split.TrainingPolicy).
	Policy Policy
	// Workers is the number of recordings processed at once
	// (pool.Size(Workers) goroutines).
	Workers int
	// Encoding of the written clips (0 = 16-bit PCM).
	Encoding wavio.Encoding
	// Shard limits the work to one shard (zero value: everything).
	Shard Shard
	// Progress, when set, is called after each clip (counted in clips)
	// from one goroutine at a time.
	Progress func(pool.Event)
}

// check refuses options the stages cannot run safely with.
func (o Options) check() error {
	if o.Out == "" {
		return errors.New("augment: no output folder")
	}
	if o.Policy == nil {
		return errors.New("augment: Options.Policy is required: build it with split.TrainingPolicy(plant), so only training groups get variants and only training backgrounds are mixed in")
	}
	return nil
}

// Summary counts what a stage did per machine id.
type Summary struct {
	Machine  string
	Clips    int
	Written  int // outputs written or verified this run
	Reused   int // outputs already present with matching ledger entry and hash
	Rejected map[string]int
	// Undefined counts the rejections for a value that could not be
	// measured, by "<reason>: <why>" (the why names the step and the
	// background, room or file).
	Undefined map[string]int
	Faults    map[string]int
	Recorded  int
	Augmented int
}

// Expand runs the expand stage: every usable recording's clips are written
// as recorded outputs, and each clip of a normal, non-hold-out condition gets
// its recipe's variants. A rerun verifies and skips outputs whose ledger
// entry and file hash match, so an interrupted run resumes to the same result.
func Expand(ctx context.Context, inv *machine.Inventory, opt Options) ([]Summary, error) {
	return runStage(ctx, inv, opt, ledger.Expand)
}

type job struct {
	index int
	rec   *machine.Recording
	m     *machine.Machine
	c     *machine.Condition
}

type jobResult struct {
	job     job
	entries []ledger.Entry
	reused  int
	ticked  int64 // clips reported to the progress reporter
	err     error
}

func runStage(ctx context.Context, inv *machine.Inventory, opt Options, stage ledger.Stage) ([]Summary, error) {
	p := inv.Plant
	if err := opt.check(); err != nil {
		return nil, err
	}
	if err := CheckOutput(p, opt.Out); err != nil {
		return nil, err
	}
	envs := map[string]*env{}
	plans := &Plans{} // resampler plans, shared by every machine of the run
	var jobs []job
	for _, r := range inv.Recordings {
		if !r.Usable() {
			continue
		}
		m := p.Machine(r.Machine)
		if !opt.Shard.Has(r.Machine + "/" + r.Rel) {
			continue
		}
		if envs[m.ID] == nil {
			e, err := newEnv(p, m, opt, plans)
			if err != nil {
				return nil, err
			}
			envs[m.ID] = e
		}
		jobs = append(jobs, job{index: len(jobs), rec: r, m: m, c: m.Condition(r.Condition)})
	}
	// previous entries, for resuming
	for id, e := range envs {
		old, err := ledger.Load(filepath.Join(opt.Out, id))
		if err != nil {
			return nil, err
		}
		e.previous = map[string]ledger.Entry{}
		for _, x := range old {
			if x.Stage == stage {
				e.previous[entryKey(x)] = x
			}
		}
		j, err := ledger.OpenJournal(filepath.Join(opt.Out, id), stage, ledger.Shard(opt.Shard))
		if err != nil {
			return nil, err
		}
		e.journal = j
		defer j.Close()
	}

	var clips int64
	for _, j := range jobs {
		clips += int64(len(j.rec.Clips))
	}
	prog := pool.NewReporter(opt.Progress, string(stage), pool.UnitClips, clips)
	for _, e := range envs {
		e.progress = prog
	}
	results := make([][]ledger.Entry, len(jobs))
	reused := make([]int, len(jobs))
	err := pool.Each(ctx, len(jobs), opt.Workers, func(ctx context.Context, _, i int) error {
		j := jobs[i]
		e := envs[j.m.ID]
		var r jobResult
		if stage == ledger.Faults {
			r = e.faultJob(ctx, j)
		} else {
			r = e.expandJob(ctx, j)
		}
		if r.err != nil {
			return r.err
		}
		results[i], reused[i] = r.entries, r.reused
		// The clips a job did not report one by one (a recording with no
		// fault plan, say) count as done with it.
		w, rej := 0, 0
		for _, e := range r.entries {
			if e.Kind == ledger.KindRejected {
				rej++
			} else {
				w++
			}
		}
		prog.Add(int64(len(j.rec.Clips))-r.ticked, w, rej, j.m.ID, j.rec.Rel)
		return nil
	})
	if err != nil {
		return nil, err
	}
	sums := map[string]*Summary{}
	for i, j := range jobs {
		s := sums[j.m.ID]
		if s == nil {
			s = &Summary{Machine: j.m.ID, Rejected: map[string]int{}, Undefined: map[string]int{}, Faults: map[string]int{}}
			sums[j.m.ID] = s
		}
		s.Clips += len(j.rec.Clips)
		s.Reused += reused[i]
		for _, e := range results[i] {
			if e.Kind == ledger.KindRejected {
				s.Rejected[e.Reason]++
				countUndefined(s.Undefined, e)
				continue
			}
			s.Written++
			switch e.Origin {
			case machine.OriginRecorded:
				s.Recorded++
			case machine.OriginAugmented:
				s.Augmented++
			case machine.OriginSyntheticFault:
				s.Faults[e.Fault.Kind]++
			}
		}
	}
	// commit each machine's section in job order
	byMachine := map[string][]ledger.Entry{}
	for i, j := range jobs {
		byMachine[j.m.ID] = append(byMachine[j.m.ID], results[i]...)
	}
	var ids []string
	for id := range envs {
		ids = append(ids, id)
	}
	sort.Strings(ids)
	var out2 []Summary
	for _, id := range ids {
		envs[id].journal.Close()
		if err := commit(opt, envs[id].m, stage, byMachine[id]); err != nil {
			return nil, err
		}
		if s := sums[id]; s != nil {
			out2 = append(out2, *s)
		}
	}
	return out2, nil
}

// countUndefined counts a rejected line's undefined values by reason and
// cause.
func countUndefined(m map[string]int, e ledger.Entry) {
	for _, st := range e.Steps {
		for _, why := range st.Undefined {
			m[e.Reason+": "+why]++
		}
	}
	for field, why := range e.Undefined {
		m[e.Reason+": "+field+": "+why]++
	}
}

// commit writes the stage's section in canonical order: the whole ledger
// when unsharded, a ledger part when sharded (joined later by ledger.Merge).
func commit(opt Options, m *machine.Machine, stage ledger.Stage, entries []ledger.Entry) error {
	ledger.Sort(m, entries)
	return ledger.Commit(filepath.Join(opt.Out, m.ID), stage, ledger.Shard(opt.Shard), entries)
}

func entryKey(e ledger.Entry) string {
	return fmt.Sprintf("%s|%d|%s|%d|%s", e.Source, e.Clip, e.Origin, e.Variant, faultKind(e))
}

func faultKind(e ledger.Entry) string {
	if e.Fault != nil {
		return e.Fault.Kind
	}
	return ""
}

// stem turns a recording's path inside its condition folder into a file
// name stem: folders joined with "--", unsafe characters replaced.
func stem(r *machine.Recording) string {
	rel := strings.TrimPrefix(r.Rel, r.Machine+"/"+r.Condition+"/")
	rel = strings.TrimPrefix(rel, machine.AnomalousDir+"/")
	rel = strings.TrimSuffix(rel, path.Ext(rel))
	var b strings.Builder
	for _, c := range rel {
		switch {
		case c == '/':
			b.WriteString("--")
		case c >= 'a' && c <= 'z', c >= 'A' && c <= 'Z', c >= '0' && c <= '9', c == '-', c == '_', c == '.':
			b.WriteRune(c)
		default:
			b.WriteByte('_')
		}
	}
	return b.String()
}

// env is the per-machine state shared by workers: read-only after newEnv
// except for the lazily filled caches, which are guarded.
type env struct {
	p        *machine.Plant
	m        *machine.Machine
	opt      Options
	fs       float64
	holdOut  [][2]float64
	bgIDs    []string
	bgFrames map[string]int64
	previous map[string]ledger.Entry
	journal  *ledger.Journal
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
	e := &env{p: p, m: m, opt: opt, fs: float64(p.SampleRate), holdOut: HoldOutBands(m),
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
			if a.Format.SampleRate != p.SampleRate {
				return nil, fmt.Errorf("augment: background %s (%s): sample rate %d Hz, the plant's working rate is %d Hz", b.ID, b.Path, a.Format.SampleRate, p.SampleRate)
			}
			e.bg[id] = a.Mono(nil)
			e.bgPath[id] = b.Path
			if bad := machine.CheckSamples(a.Data, a.Format.Channels); bad != nil {
				e.bgBad[id] = bad
			}
			e.bgFrames[id] = int64(a.Frames)
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
	if pr.TemperatureC != nil {
		r.TemperatureC = *pr.TemperatureC
	}
	return r, r.Validate()
}

func drawHash(steps []ledger.StepRecord) string {
	b, _ := json.Marshal(steps)
	s := sha256.Sum256(b)
	return hex.EncodeToString(s[:8])
}

// reusable returns a previous entry when it still describes this output and
// its file on disk hashes to the recorded value.
func (e *env) reusable(want ledger.Entry) (ledger.Entry, bool) {
	old, ok := e.previous[entryKey(want)]
	if !ok || old.Seed != want.Seed || old.Draw != want.Draw || old.SourceSHA256 != want.SourceSHA256 {
		return ledger.Entry{}, false
	}
	if old.Kind == ledger.KindRejected {
		return old, true
	}
	if old.Path != want.Path {
		return ledger.Entry{}, false
	}
	sum, err := machine.HashFile(filepath.Join(e.opt.Out, filepath.FromSlash(old.Path)))
	if err != nil || sum != old.SHA256 {
		return ledger.Entry{}, false
	}
	return old, true
}

// write encodes x, writes it atomically under Out and returns its sha256.
func (e *env) write(rel string, x []float64) (string, error) {
	enc := e.opt.Encoding
	if enc == 0 {
		enc = wavio.PCM16
	}
	var buf bytes.Buffer
	buf.Grow(len(x)*3 + 64)
	if err := wavio.Encode(&buf, x, e.p.SampleRate, 1, enc); err != nil {
		return "", err
	}
	if err := machine.WriteFileAtomic(filepath.Join(e.opt.Out, filepath.FromSlash(rel)), buf.Bytes()); err != nil {
		return "", err
	}
	s := sha256.Sum256(buf.Bytes())
	return hex.EncodeToString(s[:]), nil
}

func (e *env) base(r *machine.Recording, c machine.Clip) ledger.Entry {
	return ledger.Entry{
		Kind: ledger.KindOutput, Source: r.Rel, SourceSHA256: r.SHA256, Clip: c.Index,
		ClipStart: c.Start, ClipFrames: c.Frames, Machine: r.Machine, Condition: r.Condition,
		Label: r.Label, Group: r.Group, SampleRate: e.p.SampleRate, Speed: 1, Scale: 1, Tool: machine.ToolVersion,
	}
}

func (e *env) expandJob(ctx context.Context, j job) jobResult {
	res := jobResult{job: j}
	r := j.rec
	recipe := e.p.RecipeFor(j.m, j.c)
	augmentable := r.Label == machine.LabelNormal && !j.c.HoldOut && recipe != nil &&
		e.opt.Policy.Trains(r.Machine, r.Group)
	st := stem(r)
	folder := "recorded"
	if r.Label == machine.LabelAnomalous {
		folder = "anomalous"
	}
	scratch := &workspace{}
	err := r.ReadClips(e.counted(&res, func(c machine.Clip, x []float64) error {
		if err := ctx.Err(); err != nil {
			return err
		}
		ent := e.base(r, c)
		ent.Stage = ledger.Expand
		ent.Origin = machine.OriginRecorded
		ent.Variant = -1
		ent.Seed = 0
		ent.Path = fmt.Sprintf("%s/%s/%s/%s-c%04d.wav", r.Machine, r.Condition, folder, st, c.Index)
		if !e.reuse(&res, ent) {
			if err := e.emit(&res, ent, x); err != nil {
				return err
			}
		}
		if !augmentable {
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

// counted wraps a per-clip function so that every clip it finishes is
// reported as progress.
func (e *env) counted(res *jobResult, fn func(machine.Clip, []float64) error) func(machine.Clip, []float64) error {
	return func(c machine.Clip, x []float64) error {
		if err := fn(c, x); err != nil {
			return err
		}
		res.ticked++
		e.progress.Add(1, 0, 0, res.job.m.ID, res.job.rec.Rel)
		return nil
	}
}

// reuse appends a previous entry that still describes want (same draw,
// seed, source and file hash) and reports whether it did.
func (e *env) reuse(res *jobResult, want ledger.Entry) bool {
	old, ok := e.reusable(want)
	if ok {
		res.entries = append(res.entries, old)
		res.reused++
	}
	return ok
}

// emit writes y for an output entry (a rejected one has no file), then
// journals the entry and appends it to the job's result.
func (e *env) emit(res *jobResult, ent ledger.Entry, y []float64) error {
	if ledger.Check(&ent) != nil {
		// belt and braces: the steps record undefined values themselves,
		// but a NaN that slips through rejects the variant, not the stage
		ent = ledger.Defined(ent, "not finite")
		ent.Kind, ent.Reason, ent.Path = ledger.KindRejected, RejectNonFiniteValue, ""
	}
	if ent.Kind == ledger.KindOutput {
		sum, err := e.write(ent.Path, y)
		if err != nil {
			return err
		}
		ent.SHA256 = sum
	}
	if err := e.journal.Append(ent); err != nil {
		return err
	}
	res.entries = append(res.entries, ent)
	return nil
}

// variant draws variant v of a clip and returns its ledger entry as far as
// the draw determines it (no samples computed).
func (e *env) variant(j job, recipe *machine.Recipe, c machine.Clip, v int, st string) (ledger.Entry, error) {
	r := j.rec
	seed := VariantSeed(e.p.Seed, r.Machine, r.SHA256, c.Index, v, "variant")
	drawn, err := Draw(recipe, NewRand(seed), e.drawContext(j, c))
	if err != nil {
		return ledger.Entry{}, err
	}
	ent := e.base(r, c)
	ent.Stage = ledger.Expand
	ent.Origin = machine.OriginAugmented
	ent.Variant = v
	ent.Seed = seed
	ent.Draw = drawHash(records(drawn))
	ent.Path = fmt.Sprintf("%s/%s/augmented/%s-c%04d-v%02d.wav", r.Machine, r.Condition, st, c.Index, v)
	return ent, nil
}

func (e *env) drawContext(j job, c machine.Clip) DrawContext {
	return DrawContext{Machine: j.m, Condition: j.c, HoldOutBands: e.holdOut,
		Backgrounds: e.bgIDs, BackgroundFrames: e.bgFrames, MicPositions: len(e.mics), ClipFrames: c.Frames}
}

// render computes variant v of a clip: the samples and the complete entry
// (measured values, clip-protection scale, or the rejection reason).
func (e *env) render(ws *workspace, j job, recipe *machine.Recipe, c machine.Clip, x []float64, v int, st string) ([]float64, ledger.Entry, error) {
	ent, err := e.variant(j, recipe, c, v, st)
	if err != nil {
		return nil, ent, err
	}
	drawn, err := Draw(recipe, NewRand(ent.Seed), e.drawContext(j, c))
	if err != nil {
		return nil, ent, err
	}
	y, applied, reason := e.apply(ws, x, drawn, j.c)
	ent.Steps = applied
	ent.Speed = SpeedOf(drawn)
	ent.Backgrounds = BackgroundsOf(drawn)
	if reason != "" {
		ent.Kind = ledger.KindRejected
		ent.Reason = reason
		ent.Path = ""
		return nil, ent, nil
	}
	ent.Scale = Protect(y)
	return y, ent, nil
}
