package machine

import (
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"regexp"
	"strings"
)

// tempInfix sits between an atomic file's destination name and the random
// part of its temporary name: CreateAtomic writes <dir>/.<name>.tmp-<digits>
// beside <dir>/<name>. IsTemp recognises exactly that pattern, so thrum
// only ever removes temporary files it made.
const tempInfix = ".tmp-"

// tempRE matches the names CreateAtomic gives its temporary files
// (createTempFor puts decimal digits after the infix).
var tempRE = regexp.MustCompile(`^\..+\.tmp-[0-9]+$`)

// tempPattern is the glob pattern of the temporary files for path (the *
// stands for the decimal digits createTempFor puts there).
func tempPattern(path string) string { return "." + filepath.Base(path) + tempInfix + "*" }

// IsTemp reports whether a file name (no folder) is the name of a
// temporary file CreateAtomic made: .<name>.tmp-<digits>.
func IsTemp(name string) bool { return tempRE.MatchString(name) }

// RemoveTemps removes, under root (recursively, not following symbolic
// links, skipping StaleDir), every regular file whose name IsTemp: the
// leftovers of a write that was killed before its rename. It returns the
// removed files relative to root, slash-separated. A missing root is empty.
// The caller must hold the output root's lock: a temporary file of a live
// writer would be removed under it.
func RemoveTemps(root string) ([]string, error) {
	var removed []string
	err := filepath.WalkDir(root, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			if p == root && errors.Is(err, fs.ErrNotExist) {
				return fs.SkipDir
			}
			return err
		}
		if d.IsDir() {
			if d.Name() == StaleDir && p != root {
				return fs.SkipDir
			}
			return nil
		}
		if !d.Type().IsRegular() || !IsTemp(d.Name()) {
			return nil
		}
		if err := os.Remove(p); err != nil && !errors.Is(err, fs.ErrNotExist) {
			return err
		}
		rel, _ := filepath.Rel(root, p)
		removed = append(removed, filepath.ToSlash(rel))
		return nil
	})
	if err != nil {
		return removed, fmt.Errorf("machine: remove temporary files under %s: %w", root, err)
	}
	return removed, nil
}

// AtomicFile is a temporary file beside its destination: Commit syncs,
// closes and renames it into place, Abort removes it. The destination is
// either absent, the old file or the complete new one, whatever happens.
type AtomicFile struct {
	*os.File
	path string
	done bool
}

// RemoveTempsOf removes the temporary files CreateAtomic left beside path
// (of writes to path that were killed before their rename), not those of
// other files in its folder. The caller must hold the output root's lock.
func RemoveTempsOf(path string) error {
	ms, err := filepath.Glob(filepath.Join(filepath.Dir(path), globEscape(tempPattern(path))))
	if err != nil {
		return fmt.Errorf("machine: %w", err)
	}
	for _, m := range ms {
		if st, err := os.Lstat(m); err == nil && st.Mode().IsRegular() && IsTemp(filepath.Base(m)) {
			if err := os.Remove(m); err != nil && !errors.Is(err, fs.ErrNotExist) {
				return fmt.Errorf("machine: %w", err)
			}
		}
	}
	return nil
}

// globEscape quotes the glob metacharacters of a pattern except its final *.
func globEscape(p string) string {
	body := strings.TrimSuffix(p, "*")
	var b strings.Builder
	for _, c := range body {
		if strings.ContainsRune(`*?[\`, c) {
			b.WriteByte('\\')
		}
		b.WriteRune(c)
	}
	return b.String() + "*"
}

// CreateAtomic starts an AtomicFile for path (mode 0644), creating its
// folder if needed.
func CreateAtomic(path string) (*AtomicFile, error) {
	f, err := createTempFor(path)
	if err != nil {
		return nil, err
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
