package ledger

import (
	"fmt"
	"os"
	"path/filepath"
	"regexp"
	"sort"
	"strconv"

	"thrum/machine"
)

// Sort puts a machine's entries of one stage in the canonical ledger order:
// condition (as declared), source recording, clip, variant (the recorded
// clip, variant −1, first). Single runs and merged shards both use it, so
// their ledgers are byte-identical.
func Sort(m *machine.Machine, es []Entry) {
	cond := map[string]int{}
	for i, c := range m.Conditions {
		cond[c.Name] = i
	}
	sort.SliceStable(es, func(i, j int) bool {
		a, b := &es[i], &es[j]
		if ca, cb := cond[a.Condition], cond[b.Condition]; ca != cb {
			return ca < cb
		}
		if a.Source != b.Source {
			return a.Source < b.Source
		}
		if a.Clip != b.Clip {
			return a.Clip < b.Clip
		}
		return a.Variant < b.Variant
	})
}

var partRE = regexp.MustCompile(`^part-([a-z]+)-(\d+)-of-(\d+)\.jsonl$`)

// Merge joins the ledger parts written by sharded runs into each machine's
// ledger, in canonical order, and removes the parts. Every shard of a stage
// must be present; a missing one is an error naming it. It returns the
// number of stage sections merged.
func Merge(p *machine.Plant, out string) (int, error) {
	merged := 0
	for i := range p.Machines {
		m := &p.Machines[i]
		dir := filepath.Join(out, m.ID, PartsDir)
		ents, err := os.ReadDir(dir)
		if os.IsNotExist(err) {
			continue
		}
		if err != nil {
			return merged, fmt.Errorf("ledger: merge: %w", err)
		}
		type stageParts struct {
			n     int
			have  map[int]bool
			files []string
		}
		stages := map[Stage]*stageParts{}
		for _, e := range ents {
			mm := partRE.FindStringSubmatch(e.Name())
			if mm == nil {
				continue
			}
			stage := Stage(mm[1])
			if stage.Rank() < 0 {
				return merged, fmt.Errorf("ledger: merge: %s: part of unknown stage %q", filepath.Join(dir, e.Name()), stage)
			}
			k, _ := strconv.Atoi(mm[2])
			n, _ := strconv.Atoi(mm[3])
			sp := stages[stage]
			if sp == nil {
				sp = &stageParts{n: n, have: map[int]bool{}}
				stages[stage] = sp
			}
			if sp.n != n {
				return merged, fmt.Errorf("ledger: merge: %s: parts of stage %s disagree on the shard count (%d and %d)", dir, stage, sp.n, n)
			}
			sp.have[k] = true
			sp.files = append(sp.files, filepath.Join(dir, e.Name()))
		}
		for _, stage := range Stages() {
			sp := stages[stage]
			if sp == nil {
				continue
			}
			for k := 0; k < sp.n; k++ {
				if !sp.have[k] {
					return merged, fmt.Errorf("ledger: merge: %s: shard %d of %d of stage %s is missing; run it (--shard %d/%d) before merging", m.ID, k, sp.n, stage, k, sp.n)
				}
			}
			var all []Entry
			for _, f := range sp.files {
				es, err := ReadFile(f)
				if err != nil {
					return merged, err
				}
				all = append(all, es...)
			}
			Sort(m, all)
			if err := Commit(filepath.Join(out, m.ID), stage, Shard{}, all); err != nil {
				return merged, err
			}
			for _, f := range sp.files {
				if err := os.Remove(f); err != nil {
					return merged, fmt.Errorf("ledger: merge: %w", err)
				}
			}
			merged++
		}
		os.Remove(dir)
	}
	return merged, nil
}
