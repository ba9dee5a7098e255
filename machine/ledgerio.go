package machine

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"sync"
)

// LedgerName is the ledger file of a machine inside its output folder.
const LedgerName = "ledger.jsonl"

// Stages in the order their sections appear in a ledger.
var stageRank = map[string]int{"expand": 0, "faults": 1, "features": 2}

// AtomicFile is a temporary file beside its destination: Commit syncs,
// closes and renames it into place, Abort removes it. The destination is
// either absent, the old file or the complete new one, whatever happens.
type AtomicFile struct {
	*os.File
	path string
	done bool
}

// CreateAtomic starts an AtomicFile for path (mode 0644), creating its
// folder if needed.
func CreateAtomic(path string) (*AtomicFile, error) {
	dir := filepath.Dir(path)
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, fmt.Errorf("machine: %w", err)
	}
	f, err := os.CreateTemp(dir, "."+filepath.Base(path)+".tmp-*")
	if err != nil {
		return nil, fmt.Errorf("machine: %w", err)
	}
	if err := f.Chmod(0o644); err != nil {
		f.Close()
		os.Remove(f.Name())
		return nil, fmt.Errorf("machine: %w", err)
	}
	return &AtomicFile{File: f, path: path}, nil
}

// Commit makes the file visible at its destination.
func (a *AtomicFile) Commit() error {
	if a.done {
		return fmt.Errorf("machine: %s: already closed", a.path)
	}
	a.done = true
	err := a.File.Sync()
	if cerr := a.File.Close(); err == nil {
		err = cerr
	}
	if err == nil {
		err = os.Rename(a.File.Name(), a.path)
	}
	if err != nil {
		os.Remove(a.File.Name())
		return fmt.Errorf("machine: write %s: %w", a.path, err)
	}
	return nil
}

// Abort removes the temporary file; the destination is untouched.
func (a *AtomicFile) Abort() {
	if a.done {
		return
	}
	a.done = true
	a.File.Close()
	os.Remove(a.File.Name())
}

// WriteFileAtomic writes data through an AtomicFile.
func WriteFileAtomic(path string, data []byte) error {
	f, err := CreateAtomic(path)
	if err != nil {
		return err
	}
	if _, err := f.Write(data); err != nil {
		f.Abort()
		return fmt.Errorf("machine: write %s: %w", path, err)
	}
	return f.Commit()
}

// LoadLedger reads a machine's ledger and any journal left by an interrupted
// stage. A missing ledger is empty, not an error.
func LoadLedger(machineDir string) ([]Entry, error) {
	var all []Entry
	for _, name := range ledgerFiles(machineDir) {
		b, err := os.ReadFile(name)
		if errors.Is(err, fs.ErrNotExist) {
			continue
		}
		if err != nil {
			return nil, err
		}
		es, err := ReadLedger(bytes.NewReader(b), name)
		if err != nil && !isJournal(name) {
			return nil, err
		}
		// a journal may end in a torn line after a crash: what parsed is kept
		all = append(all, es...)
	}
	return all, nil
}

func ledgerFiles(dir string) []string {
	out := []string{filepath.Join(dir, LedgerName)}
	js, _ := filepath.Glob(filepath.Join(dir, ".journal-*.jsonl"))
	ps, _ := filepath.Glob(filepath.Join(dir, "parts", "part-*.jsonl"))
	return append(append(out, js...), ps...)
}

func isJournal(name string) bool {
	b := filepath.Base(name)
	return len(b) > 9 && b[:9] == ".journal-"
}

// Journal appends ledger lines as a stage completes outputs, so a killed
// run can resume without redoing them. It is safe for concurrent use.
type Journal struct {
	mu sync.Mutex
	f  *os.File
}

// OpenJournal opens (appending) the journal of one stage in a machine folder.
func OpenJournal(machineDir, stage string) (*Journal, error) {
	if err := os.MkdirAll(machineDir, 0o755); err != nil {
		return nil, err
	}
	f, err := os.OpenFile(filepath.Join(machineDir, ".journal-"+stage+".jsonl"), os.O_CREATE|os.O_WRONLY|os.O_APPEND, 0o644)
	if err != nil {
		return nil, err
	}
	return &Journal{f: f}, nil
}

// Append writes entries as one write; the files they name must already be
// complete on disk.
func (j *Journal) Append(es ...Entry) error {
	var buf bytes.Buffer
	enc := json.NewEncoder(&buf)
	for i := range es {
		if err := enc.Encode(&es[i]); err != nil {
			return err
		}
	}
	j.mu.Lock()
	defer j.mu.Unlock()
	_, err := j.f.Write(buf.Bytes())
	return err
}

// Close closes the journal file.
func (j *Journal) Close() error { return j.f.Close() }

// CommitStage rewrites a machine's ledger with the given stage's section
// replaced by entries (in their order), keeping the other stages' sections,
// then removes that stage's journal. The ledger is written atomically.
func CommitStage(machineDir, stage string, entries []Entry) error {
	old, err := ReadLedgerFile(filepath.Join(machineDir, LedgerName))
	if err != nil {
		return err
	}
	sections := map[int][]Entry{}
	for _, e := range old {
		if e.Stage != stage {
			sections[stageRank[e.Stage]] = append(sections[stageRank[e.Stage]], e)
		}
	}
	sections[stageRank[stage]] = entries
	var buf bytes.Buffer
	enc := json.NewEncoder(&buf)
	for r := 0; r <= len(stageRank); r++ {
		for i := range sections[r] {
			if err := enc.Encode(&sections[r][i]); err != nil {
				return fmt.Errorf("machine: ledger %s: %w", machineDir, err)
			}
		}
	}
	if err := WriteFileAtomic(filepath.Join(machineDir, LedgerName), buf.Bytes()); err != nil {
		return err
	}
	if err := os.Remove(filepath.Join(machineDir, ".journal-"+stage+".jsonl")); err != nil && !errors.Is(err, fs.ErrNotExist) {
		return err
	}
	return nil
}

// ReadLedgerFile reads one ledger file; a missing file is empty.
func ReadLedgerFile(path string) ([]Entry, error) {
	b, err := os.ReadFile(path)
	if errors.Is(err, fs.ErrNotExist) {
		return nil, nil
	}
	if err != nil {
		return nil, err
	}
	return ReadLedger(bytes.NewReader(b), path)
}
