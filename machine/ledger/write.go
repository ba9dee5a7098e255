package ledger

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"sync"

	"thrum/machine"
)

// PartsDir is the folder, inside a machine folder, of the ledger parts that
// sharded runs write.
const PartsDir = "parts"

const (
	journalPrefix = ".journal-"
	partPrefix    = "part-"
)

// Shard names one share of a sharded run: shard I of N. N ≤ 1 is an
// unsharded run.
type Shard struct{ I, N int }

func (s Shard) sharded() bool { return s.N > 1 }

func (s Shard) suffix(stage Stage) string {
	if s.sharded() {
		return fmt.Sprintf("%s-%d-of-%d", stage, s.I, s.N)
	}
	return string(stage)
}

// JournalName is the file name of a stage's journal in a machine folder:
// .journal-<stage>.jsonl, or .journal-<stage>-<i>-of-<n>.jsonl for a shard.
func JournalName(stage Stage, s Shard) string { return journalPrefix + s.suffix(stage) + ".jsonl" }

// PartName is the file name, inside PartsDir, of a shard's ledger part:
// part-<stage>-<i>-of-<n>.jsonl.
func PartName(stage Stage, s Shard) string {
	return fmt.Sprintf("%s%s-%d-of-%d.jsonl", partPrefix, stage, s.I, s.N)
}

// Encode writes entries as ledger lines, each stamped with the current
// Schema (the entries themselves are not modified).
func Encode(w io.Writer, entries []Entry) error {
	var buf bytes.Buffer
	if err := encode(&buf, entries); err != nil {
		return err
	}
	_, err := w.Write(buf.Bytes())
	return err
}

func encode(buf *bytes.Buffer, entries []Entry) error {
	enc := json.NewEncoder(buf)
	for i := range entries {
		e := entries[i]
		e.Schema = Schema
		// encoding/json's own error names no line or field
		if err := Check(&e); err != nil {
			return err
		}
		if err := enc.Encode(&e); err != nil {
			return fmt.Errorf("ledger: %s line of %s: %w", e.Stage, e.Path, err)
		}
	}
	return nil
}

// Journal appends ledger lines as a stage completes outputs, so a killed
// run can resume without redoing them. It is safe for concurrent use.
type Journal struct {
	mu sync.Mutex
	f  *os.File
}

// OpenJournal opens (appending) the journal of one stage, or of one shard of
// it, in a machine folder.
func OpenJournal(machineDir string, stage Stage, s Shard) (*Journal, error) {
	if err := os.MkdirAll(machineDir, 0o755); err != nil {
		return nil, fmt.Errorf("ledger: %w", err)
	}
	f, err := os.OpenFile(filepath.Join(machineDir, JournalName(stage, s)), os.O_CREATE|os.O_WRONLY|os.O_APPEND, 0o644)
	if err != nil {
		return nil, fmt.Errorf("ledger: %w", err)
	}
	return &Journal{f: f}, nil
}

// Append writes entries as one write; the files they name must already be
// complete on disk.
func (j *Journal) Append(es ...Entry) error {
	var buf bytes.Buffer
	if err := encode(&buf, es); err != nil {
		return err
	}
	j.mu.Lock()
	defer j.mu.Unlock()
	if _, err := j.f.Write(buf.Bytes()); err != nil {
		return fmt.Errorf("ledger: %w", err)
	}
	return nil
}

// Close closes the journal file.
func (j *Journal) Close() error { return j.f.Close() }

// Commit ends a stage in a machine folder. Unsharded, it rewrites the
// ledger with the stage's section replaced by entries (in their order),
// keeping the other stages' sections in canonical stage order; sharded, it
// writes the shard's part for Merge to join later, even when entries is
// empty (a shard with no work of this machine), so Merge never waits for a
// part that cannot come. Either file is written atomically; an unsharded
// commit that would leave an empty ledger where there was none writes
// nothing. Then the stage's (or shard's) journal is removed.
func Commit(machineDir string, stage Stage, s Shard, entries []Entry) error {
	if stage.Rank() < 0 {
		return fmt.Errorf("ledger: %s: commit of unknown stage %q", machineDir, stage)
	}
	var buf bytes.Buffer
	target := filepath.Join(machineDir, PartsDir, PartName(stage, s))
	if s.sharded() {
		if err := encode(&buf, entries); err != nil {
			return err
		}
	} else {
		target = filepath.Join(machineDir, FileName)
		old, err := ReadFile(target)
		if err != nil {
			return err
		}
		sections := make([][]Entry, len(Stages()))
		for _, e := range old {
			if e.Stage != stage {
				sections[e.Stage.Rank()] = append(sections[e.Stage.Rank()], e)
			}
		}
		sections[stage.Rank()] = entries
		for _, sec := range sections {
			if err := encode(&buf, sec); err != nil {
				return err
			}
		}
	}
	// A shard writes its part even when empty (Merge then knows the shard
	// ran); an unsharded commit of nothing into no ledger writes no file.
	if _, err := os.Stat(target); s.sharded() || buf.Len() > 0 || err == nil {
		if err := machine.WriteFileAtomic(target, buf.Bytes()); err != nil {
			return err
		}
		if err := machine.RemoveTempsOf(target); err != nil {
			return err
		}
	}
	if err := os.Remove(filepath.Join(machineDir, JournalName(stage, s))); err != nil && !errors.Is(err, fs.ErrNotExist) {
		return fmt.Errorf("ledger: %w", err)
	}
	return nil
}
