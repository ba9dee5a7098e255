package machine

import (
	"errors"
	"fmt"
	"io/fs"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"sync"
)

// DefaultBatchFiles is the number of files a Batch makes durable together.
const DefaultBatchFiles = 64

// A Batch makes many atomic writes durable together. Write puts a file's
// bytes in a temporary file beside its destination (the name CreateAtomic
// gives, so RemoveTemps clears what a killed run left) and starts its
// write-back; once Max files wait, or at Flush, one pass syncs them all,
// renames each into place, and then runs what each write asked to happen
// after it (the journal line naming the file). So a destination is either
// absent, the old file or the complete new one, and a journal line only
// ever names a file already complete on disk, as with WriteFileAtomic, for
// one sync wait per batch instead of one per file. A Batch is safe for
// concurrent use; a nil *Batch writes each file at once (WriteFileAtomic,
// then its after function).
type Batch struct {
	// Max is the number of waiting files that makes Write flush (≤ 0:
	// DefaultBatchFiles).
	Max     int
	mu      sync.Mutex
	pending []pendingFile
}

type pendingFile struct {
	f     *os.File
	path  string
	after func() error
}

// Write writes data to path through the batch (data is not kept: it may be
// reused once Write returns); after, when not nil, runs
// once the file is in place. An error of the write itself leaves nothing
// behind; an error of a flush it triggered is returned too.
func (b *Batch) Write(path string, data []byte, after func() error) error {
	if b == nil {
		if err := WriteFileAtomic(path, data); err != nil {
			return err
		}
		if after != nil {
			return after()
		}
		return nil
	}
	f, err := createTempFor(path)
	if err != nil {
		return err
	}
	if _, err := f.Write(data); err != nil {
		f.Close()
		os.Remove(f.Name())
		return fmt.Errorf("machine: write %s: %w", path, err)
	}
	startWriteback(f)
	max := b.Max
	if max <= 0 {
		max = DefaultBatchFiles
	}
	b.mu.Lock()
	b.pending = append(b.pending, pendingFile{f: f, path: path, after: after})
	var full []pendingFile
	if len(b.pending) >= max {
		full, b.pending = b.pending, nil
	}
	b.mu.Unlock()
	return flushFiles(full)
}

// Flush makes every waiting file durable and visible, then runs their
// after functions. On an error the files not yet renamed are removed.
func (b *Batch) Flush() error {
	if b == nil {
		return nil
	}
	b.mu.Lock()
	all := b.pending
	b.pending = nil
	b.mu.Unlock()
	return flushFiles(all)
}

// Abort removes every waiting file's temporary file: their destinations
// stay as they were and their after functions never run.
func (b *Batch) Abort() {
	if b == nil {
		return
	}
	b.mu.Lock()
	all := b.pending
	b.pending = nil
	b.mu.Unlock()
	for _, p := range all {
		p.f.Close()
		os.Remove(p.f.Name())
	}
}

// flushFiles syncs the files in one pass (their write-back already
// started), closes and renames them, then runs their after functions in
// order.
func flushFiles(files []pendingFile) error {
	var err error
	for _, p := range files {
		if err == nil {
			if e := p.f.Sync(); e != nil {
				err = fmt.Errorf("machine: write %s: %w", p.path, e)
			}
		}
		if e := p.f.Close(); e != nil && err == nil {
			err = fmt.Errorf("machine: write %s: %w", p.path, e)
		}
	}
	for i, p := range files {
		if err == nil {
			if e := os.Rename(p.f.Name(), p.path); e != nil {
				err = fmt.Errorf("machine: write %s: %w", p.path, e)
			} else {
				continue
			}
		}
		// after a failure: nothing of the rest becomes visible
		for _, q := range files[i:] {
			os.Remove(q.f.Name())
		}
		return err
	}
	for _, p := range files {
		if p.after != nil {
			if e := p.after(); e != nil {
				return e
			}
		}
	}
	return nil
}

// createTempFor creates the temporary file of an atomic write to path,
// mode 0644, creating its folder only when it is missing (no lookup on the
// common path).
func createTempFor(path string) (*os.File, error) {
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	for try := 0; ; try++ {
		name := filepath.Join(dir, "."+base+tempInfix+strconv.FormatUint(uint64(rand.Uint32()), 10))
		f, err := os.OpenFile(name, os.O_RDWR|os.O_CREATE|os.O_EXCL, 0o644)
		switch {
		case err == nil:
			if !umaskKeeps0644 {
				if err := f.Chmod(0o644); err != nil {
					f.Close()
					os.Remove(name)
					return nil, fmt.Errorf("machine: %w", err)
				}
			}
			return f, nil
		case errors.Is(err, fs.ErrExist) && try < 100:
			continue
		case errors.Is(err, fs.ErrNotExist) && try == 0:
			if err := os.MkdirAll(dir, 0o755); err != nil {
				return nil, fmt.Errorf("machine: %w", err)
			}
		default:
			return nil, fmt.Errorf("machine: %w", err)
		}
	}
}
