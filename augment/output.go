package augment

import (
	"errors"
	"fmt"
	"io/fs"
	"path/filepath"
	"strings"

	"thrum/machine"
)

// CheckOutput refuses an output folder that is, or is inside, the recordings
// root (sources are never written, and outputs must never be read back as
// recordings), or that contains it. Both paths are compared as written and
// as real paths, symbolic links resolved (for a folder not made yet, those
// of its nearest existing parent), both ways, so a link cannot smuggle OUT
// into the recordings. A recordings root that is the file-system root is
// refused outright: every folder is inside it.
func CheckOutput(p *machine.Plant, out string) error {
	rec := p.RecordingsRoot()
	ar, err1 := filepath.Abs(rec)
	ao, err2 := filepath.Abs(out)
	if err1 != nil || err2 != nil {
		return fmt.Errorf("augment: cannot resolve the output folder %s or the recordings root %s", out, rec)
	}
	rr, err := realPath(ar)
	if err != nil {
		return fmt.Errorf("augment: recordings root: %w", err)
	}
	ro, err := realPath(ao)
	if err != nil {
		return fmt.Errorf("augment: output folder: %w", err)
	}
	if isFSRoot(ar) || isFSRoot(rr) {
		return fmt.Errorf("augment: the recordings root %s (recordings in %s) is the file-system root: every output folder would be inside it; set recordings to the folder that holds the machine folders", rec, p.Path)
	}
	for _, pair := range [][2]string{{ao, ar}, {ro, rr}} {
		o, r := pair[0], pair[1]
		if within(o, r) {
			return fmt.Errorf("augment: output folder %s is inside the recordings root %s (real paths %s, %s); choose a folder outside it", out, rec, ro, rr)
		}
		if within(r, o) {
			return fmt.Errorf("augment: output folder %s contains the recordings root %s (real paths %s, %s); choose a folder beside it", out, rec, ro, rr)
		}
	}
	return nil
}

// realPath resolves the symbolic links in the absolute path abs. When abs
// does not exist yet, its nearest existing parent is resolved and the rest
// appended.
func realPath(abs string) (string, error) {
	rest := ""
	for {
		r, err := filepath.EvalSymlinks(abs)
		if err == nil {
			return filepath.Join(r, rest), nil
		}
		if !errors.Is(err, fs.ErrNotExist) {
			return "", err
		}
		parent := filepath.Dir(abs)
		if parent == abs {
			return filepath.Join(abs, rest), nil
		}
		rest = filepath.Join(filepath.Base(abs), rest)
		abs = parent
	}
}

// within reports whether path is root or inside it (both clean and absolute).
func within(path, root string) bool {
	rel, err := filepath.Rel(root, path)
	return err == nil && rel != ".." && !strings.HasPrefix(rel, ".."+string(filepath.Separator))
}

func isFSRoot(path string) bool { return filepath.Dir(path) == path }
