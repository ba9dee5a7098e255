package features

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"path/filepath"
	"sort"

	"thrum/machine"
	"thrum/machine/ledger"
	"thrum/machine/pool"
)

// Folder and file names of the features stage under the output root.
const (
	Dir       = "features"
	IndexFile = "index.csv"
	// PicturesDir is the folder of the pictures, inside Dir.
	PicturesDir = "pictures"
	StatsFile   = "stats.json"
)

// Input is one audio file of the split lists.
type Input struct {
	// Path is the audio file relative to the output root (as in the ledger).
	Path, SHA256                string
	Machine, Condition          string
	Split                       machine.Split
	Origin                      machine.Origin
	Label                       machine.Label
	Source, SourceSHA256, Group string
	Clip                        int
	// FaultKind is the kind of a synthetic fault cue ("" otherwise); Speed
	// the total speed ratio applied to the clip (1 when none).
	FaultKind string
	Speed     float64
}

// StageOptions configure the features stage. Out is required.
type StageOptions struct {
	Out     string
	Workers int // pool.Size(Workers) goroutines
	// Progress, when set, is called after each clip (one input file) from
	// one goroutine at a time.
	Progress func(pool.Event)
}

// StageSummary counts what the stage did per machine.
type StageSummary struct {
	Machine              string
	Files, Masked, Reuse int
	StatsInputs          int
	// Stale lists the feature files and pictures of the machine that
	// nothing of this run names any more, moved to OUT/.stale (paths
	// relative to the output root, as they were).
	Stale []string
}

// RunStage computes the features of every input: log-mel per clip (.npy,
// frames × bands, float32), its envelope spectrum, summary statistics in
// index.csv, masked copies of training clips (logged in the machine's
// ledger, stage "features"), normalisation statistics per machine fitted on
// the training clips only, optional stacked arrays and pictures. A rerun
// reuses features whose audio and .npy hashes still match.
func RunStage(ctx context.Context, p *machine.Plant, inputs []Input, opt StageOptions) ([]StageSummary, error) {
	if opt.Out == "" {
		return nil, errors.New("features: no output folder")
	}
	sort.SliceStable(inputs, func(i, j int) bool {
		if inputs[i].Machine != inputs[j].Machine {
			return inputs[i].Machine < inputs[j].Machine
		}
		return inputs[i].Path < inputs[j].Path
	})
	setups := map[string]machineSetup{}
	for _, in := range inputs {
		if _, ok := setups[in.Machine]; ok {
			continue
		}
		m := p.Machine(in.Machine)
		if m == nil {
			return nil, fmt.Errorf("features: %s: machine %q is not in the plant", in.Path, in.Machine)
		}
		s, err := setupFor(p, m)
		if err != nil {
			return nil, err
		}
		setups[in.Machine] = s
	}
	if _, err := machine.RemoveTemps(filepath.Join(opt.Out, Dir)); err != nil {
		return nil, fmt.Errorf("features: %w", err)
	}
	old := readIndex(filepath.Join(opt.Out, Dir, IndexFile))
	keep := pictureInputs(inputs, setups)
	// Per worker: one feature plan per machine, reused across its clips.
	ws := make([]map[string]*worker, pool.Size(opt.Workers))
	prog := pool.NewReporter(opt.Progress, "features", pool.UnitClips, int64(len(inputs)))
	all := make([]fileResult, len(inputs))
	// The clips' files become durable together; the stage's ledger
	// sections and index, which name them, are written after the flush.
	batch := &machine.Batch{}
	err := pool.Each(ctx, len(inputs), opt.Workers, func(ctx context.Context, w, i int) error {
		in := inputs[i]
		if ws[w] == nil {
			ws[w] = map[string]*worker{}
		}
		wk := ws[w][in.Machine]
		if wk == nil {
			var err error
			wk, err = newWorker(setups[in.Machine], float64(p.SampleRate))
			if err != nil {
				return err
			}
			wk.batch = batch
			ws[w][in.Machine] = wk
		}
		r := wk.do(p, opt.Out, in, old[in.Path])
		if r.err != nil {
			return r.err
		}
		if !keep[i] {
			r.feat = nil // memory stays flat: only picture clips keep their arrays
		}
		all[i] = r
		prog.Add(1, 0, 0, in.Machine, in.Path)
		return nil
	})
	if ferr := batch.Flush(); err == nil {
		err = ferr
	}
	if err != nil {
		return nil, err
	}
	return finishStage(p, opt.Out, inputs, all, setups)
}

// pictureInputs marks, per machine with pictures on, the first normal
// recorded training clip, an augmented variant of the same clip and the
// first synthetic fault: the clips the pictures show.
func pictureInputs(inputs []Input, setups map[string]machineSetup) map[int]bool {
	keep := map[int]bool{}
	rec := map[string]int{}
	for i, in := range inputs {
		if !setups[in.Machine].pictures {
			continue
		}
		if _, ok := rec[in.Machine]; !ok && in.Origin == machine.OriginRecorded && in.Split == machine.SplitTrain && in.Label == machine.LabelNormal {
			rec[in.Machine] = i
			keep[i] = true
		}
	}
	aug := map[string]bool{}
	for i, in := range inputs {
		r, ok := rec[in.Machine]
		if ok && !aug[in.Machine] && in.Origin == machine.OriginAugmented && in.Source == inputs[r].Source && in.Clip == inputs[r].Clip {
			aug[in.Machine] = true
			keep[i] = true
		}
	}
	return keep
}

// finishStage writes, in input order: statistics, ledger sections, stacked
// arrays, the index and pictures.
func finishStage(p *machine.Plant, out string, inputs []Input, all []fileResult, setups map[string]machineSetup) ([]StageSummary, error) {
	var sums []StageSummary
	keep := map[string]bool{} // every file this run wrote or verified
	byMachine := map[string][]int{}
	var ids []string
	for i, in := range inputs {
		if byMachine[in.Machine] == nil {
			ids = append(ids, in.Machine)
		}
		byMachine[in.Machine] = append(byMachine[in.Machine], i)
	}
	for _, id := range ids {
		s := StageSummary{Machine: id}
		st := setups[id]
		acc := NewAccumulator(st.cfg.Bands)
		var masked []ledger.Entry
		reused := true // every clip of the machine reused: pictures too
		for _, i := range byMachine[id] {
			r := all[i]
			s.Files++
			if r.reused {
				s.Reuse++
			}
			masked = append(masked, r.masked...)
			keep[r.row.npy], keep[r.row.env] = true, true
			reused = reused && r.reused
			for _, e := range r.masked {
				keep[e.Path] = true
			}
			if inputs[i].Split == machine.SplitTrain && inputs[i].Origin != machine.OriginSyntheticFault {
				if err := acc.AddMoments(inputs[i].Path, r.moments); err != nil {
					return nil, err
				}
				s.StatsInputs++
			}
		}
		s.Masked = len(masked)
		stats := acc.Stats(id)
		var buf bytes.Buffer
		if err := stats.WriteJSON(&buf); err != nil {
			return nil, err
		}
		if err := writeIfChanged(filepath.Join(out, Dir, id, StatsFile), buf.Bytes()); err != nil {
			return nil, err
		}
		if err := ledger.Commit(filepath.Join(out, id), ledger.Features, ledger.Shard{}, masked); err != nil {
			return nil, err
		}
		if st.stack {
			if err := writeStacks(out, id, st.cfg.Bands, inputs, all, byMachine[id], keep); err != nil {
				return nil, err
			}
		}
		if st.pictures {
			if err := pictures(p, out, id, st, inputs, all, byMachine[id], keep, reused); err != nil {
				return nil, err
			}
		}
		sums = append(sums, s)
	}
	index, err := indexBytes(all)
	if err != nil {
		return nil, fmt.Errorf("features: index: %w", err)
	}
	if err := writeIfChanged(filepath.Join(out, Dir, IndexFile), index); err != nil {
		return nil, err
	}
	// machines of the plant with no input this time: their features
	// section goes (an empty commit into no ledger writes nothing)
	for _, m := range p.Machines {
		if byMachine[m.ID] == nil {
			if err := ledger.Commit(filepath.Join(out, m.ID), ledger.Features, ledger.Shard{}, nil); err != nil {
				return nil, err
			}
		}
	}
	return sweepFeatures(p, out, sums, keep)
}
