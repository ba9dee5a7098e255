package augment

import (
	"fmt"
	"os"
	"path/filepath"
	"regexp"
	"sort"
	"strconv"

	"thrum/machine"
)

// SortEntries puts a machine's entries of one stage in the canonical ledger
// order: condition (as declared), source recording, clip, variant (the
// recorded clip, variant −1, first). Single runs and merged shards both use
// it, so their ledgers are byte-identical.
func SortEntries(m *machine.Machine, es []machine.Entry) {
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

// MergeShards joins the ledger parts written by sharded runs into each
// machine's ledger, in canonical order, and removes the parts. Every shard
// of a stage must be present; a missing one is an error naming it.
func MergeShards(p *machine.Plant, out string) (int, error) {
	merged := 0
	for i := range p.Machines {
		m := &p.Machines[i]
		dir := filepath.Join(out, m.ID, "parts")
		ents, err := os.ReadDir(dir)
		if os.IsNotExist(err) {
			continue
		}
		if err != nil {
			return merged, err
		}
		type stagePart struct {
			n     int
			have  map[int]bool
			files []string
		}
		stages := map[string]*stagePart{}
		for _, e := range ents {
			mm := partRE.FindStringSubmatch(e.Name())
			if mm == nil {
				continue
			}
			k, _ := strconv.Atoi(mm[2])
			n, _ := strconv.Atoi(mm[3])
			sp := stages[mm[1]]
			if sp == nil {
				sp = &stagePart{n: n, have: map[int]bool{}}
				stages[mm[1]] = sp
			}
			if sp.n != n {
				return merged, fmt.Errorf("augment: merge: %s: parts of stage %s disagree on the shard count (%d and %d)", dir, mm[1], sp.n, n)
			}
			sp.have[k] = true
			sp.files = append(sp.files, filepath.Join(dir, e.Name()))
		}
		names := make([]string, 0, len(stages))
		for s := range stages {
			names = append(names, s)
		}
		sort.Strings(names)
		for _, stage := range names {
			sp := stages[stage]
			for k := 0; k < sp.n; k++ {
				if !sp.have[k] {
					return merged, fmt.Errorf("augment: merge: %s: shard %d of %d of stage %s is missing; run it (--shard %d/%d) before merging", m.ID, k, sp.n, stage, k, sp.n)
				}
			}
			var all []machine.Entry
			for _, f := range sp.files {
				es, err := machine.ReadLedgerFile(f)
				if err != nil {
					return merged, err
				}
				all = append(all, es...)
			}
			SortEntries(m, all)
			if err := machine.CommitStage(filepath.Join(out, m.ID), stage, all); err != nil {
				return merged, err
			}
			for _, f := range sp.files {
				if err := os.Remove(f); err != nil {
					return merged, err
				}
			}
			merged++
		}
		os.Remove(dir)
	}
	return merged, nil
}
