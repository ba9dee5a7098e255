package augment

import (
	"context"
	"fmt"
	"path/filepath"
	"sort"

	"thrum/machine"
	"thrum/machine/ledger"
	"thrum/machine/pool"
)

// The stage driver shared by expand and faults: jobs (one per usable
// recording of the shard) on the worker pool, resuming from the previous
// ledger, and committing each machine's ledger section.

// job is one usable recording of the shard, with its index in job order.
type job struct {
	index    int
	rec      *machine.Recording
	m        *machine.Machine
	c        *machine.Condition
	from, to int // the job's clips: rec.Clips[from:to]
}

// clipsPerJob is the most clips one job takes: a long recording is cut
// into runs of clips on several workers. Each clip's outputs depend only
// on the clip, and the jobs' entries join in clip order, so the bytes do
// not depend on the cut.
const clipsPerJob = 16

// clips returns the job's clips.
func (j job) clips() []machine.Clip { return j.rec.Clips[j.from:j.to] }

// jobResult is what a job wrote or reused, as ledger entries.
type jobResult struct {
	job     job
	entries []ledger.Entry
	reused  int
	ticked  int64 // clips reported to the progress reporter
	err     error
}

// runStage runs the expand or faults stage: one job per usable recording
// of the shard on the worker pool, each machine's previous ledger loaded
// for reuse and its journal opened, then each machine's section committed
// in job order.
func runStage(ctx context.Context, inv *machine.Inventory, opt Options, stage ledger.Stage) ([]Summary, error) {
	p := inv.Plant
	if err := opt.check(); err != nil {
		return nil, err
	}
	if err := CheckOutput(p, opt.Out); err != nil {
		return nil, err
	}
	for i := range p.Machines {
		if err := removeTemps(opt.Out, &p.Machines[i], opt); err != nil {
			return nil, err
		}
	}
	envs := map[string]*env{}
	plans := &Plans{} // resampler plans, shared by every machine of the run
	var jobs []job
	// The expand section records every recording whose samples excluded
	// it, so the ledger accounts for each source the plant has.
	excluded := map[string][]ledger.Entry{}
	for _, r := range inv.Recordings {
		if kind, msg, ok := r.Exclusion(); ok && stage == ledger.Expand && opt.Shard.Has(r.Machine+"/"+r.Rel) {
			excluded[r.Machine] = append(excluded[r.Machine], ExcludedEntry(r, kind, msg))
		}
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
		for from := 0; from == 0 || from < len(r.Clips); from += clipsPerJob {
			to := min(from+clipsPerJob, len(r.Clips))
			jobs = append(jobs, job{index: len(jobs), rec: r, m: m, c: m.Condition(r.Condition), from: from, to: to})
		}
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
		clips += int64(len(j.clips()))
	}
	prog := pool.NewReporter(opt.Progress, string(stage), pool.UnitClips, clips)
	batch := &machine.Batch{}
	for _, e := range envs {
		e.progress = prog
		e.batch = batch
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
		prog.Add(int64(len(j.clips()))-r.ticked, w, rej, j.m.ID, j.rec.Rel)
		return nil
	})
	// The waiting outputs are complete whether the pool stopped early or
	// not: they become durable and journalled, so a resume reuses them.
	if ferr := batch.Flush(); err == nil {
		err = ferr
	}
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
		s.Clips += len(j.clips())
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
	for id, es := range excluded {
		byMachine[id] = append(byMachine[id], es...)
		s := sums[id]
		if s == nil {
			s = &Summary{Machine: id, Rejected: map[string]int{}, Undefined: map[string]int{}, Faults: map[string]int{}}
			sums[id] = s
		}
		for _, e := range es {
			s.Excluded = append(s.Excluded, e.Source+": "+e.Reason)
		}
	}
	// Every machine of the plant commits, those without work in this run
	// too: a shard writes an empty part (the join never waits for a part
	// that cannot come), an unsharded run drops the lines of recordings
	// that are gone.
	var ids []string
	for _, m := range p.Machines {
		ids = append(ids, m.ID)
	}
	sort.Strings(ids)
	var out2 []Summary
	for _, id := range ids {
		if e := envs[id]; e != nil {
			e.journal.Close()
		}
		m := p.Machine(id)
		if err := commit(opt, m, stage, byMachine[id]); err != nil {
			return nil, err
		}
		stale, err := sweep(opt.Out, m, stage, opt)
		if err != nil {
			return nil, err
		}
		if err := removeTemps(opt.Out, m, opt); err != nil {
			return nil, err
		}
		s := sums[id]
		if s == nil {
			if len(stale) == 0 {
				continue
			}
			s = &Summary{Machine: id, Rejected: map[string]int{}, Undefined: map[string]int{}, Faults: map[string]int{}}
		}
		s.Stale = stale
		out2 = append(out2, *s)
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

// ExcludedEntry is the expand ledger line of a recording whose samples
// excluded it (see ledger.KindExcluded); kind and msg are from
// Recording.Exclusion.
func ExcludedEntry(r *machine.Recording, kind, msg string) ledger.Entry {
	return ledger.Entry{
		Kind: ledger.KindExcluded, Stage: ledger.Expand, Source: r.Rel, SourceSHA256: r.SHA256,
		Machine: r.Machine, Condition: r.Condition, Origin: machine.OriginRecorded, Label: r.Label,
		Group: r.Group, Variant: -1, SampleRate: r.Format.SampleRate, Reason: kind + ": " + msg, Tool: machine.ToolVersion,
	}
}
