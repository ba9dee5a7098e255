package features

import (
	"fmt"
	"os"
	"path/filepath"
)

// atomicFile is a temporary file next to its destination; Commit syncs,
// closes and renames it into place, Abort removes it.
type atomicFile struct {
	*os.File
	path string
	done bool
}

func createAtomic(path string) (*atomicFile, error) {
	f, err := os.CreateTemp(filepath.Dir(path), "."+filepath.Base(path)+".tmp*")
	if err != nil {
		return nil, fmt.Errorf("features: %w", err)
	}
	return &atomicFile{File: f, path: path}, nil
}

func (a *atomicFile) Commit() error {
	if a.done {
		return fmt.Errorf("features: %s: already closed", a.path)
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
		return fmt.Errorf("features: %w", err)
	}
	return nil
}

func (a *atomicFile) Abort() {
	if a.done {
		return
	}
	a.done = true
	a.File.Close()
	os.Remove(a.File.Name())
}

// writeAtomic writes data to path through a temporary file and a rename.
func writeAtomic(path string, data []byte) error {
	f, err := createAtomic(path)
	if err != nil {
		return err
	}
	if _, err := f.Write(data); err != nil {
		f.Abort()
		return fmt.Errorf("features: %w", err)
	}
	return f.Commit()
}
