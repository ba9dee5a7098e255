package machine

import (
	"fmt"
	"os"
	"path/filepath"
)

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
