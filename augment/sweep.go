package augment

import (
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path"
	"path/filepath"
	"regexp"
	"sort"
	"strings"

	"thrum/machine"
	"thrum/machine/ledger"
)

// Output folders inside OUT/<machine-id>/<condition>/, and the file names
// the stages give their outputs there (see expandJob, variant, faultDraw).
// A stage sweeps only its own folders, and only names that match: it never
// moves a file it did not write.
var stageFolders = map[ledger.Stage][]struct {
	folder string
	name   *regexp.Regexp
}{
	ledger.Expand: {
		{"recorded", regexp.MustCompile(`^.+-c[0-9]{4}\.wav$`)},
		{"anomalous", regexp.MustCompile(`^.+-c[0-9]{4}\.wav$`)},
		{"augmented", regexp.MustCompile(`^.+-c[0-9]{4}-v[0-9]{2,}\.wav$`)},
	},
	ledger.Faults: {
		{"faults", regexp.MustCompile(`^.+-c[0-9]{4}-[a-z][a-z-]*-[0-9]{2,}\.wav$`)},
	},
}

// ownedBy reports which stage writes an output path (relative to the output
// root, slash-separated), or "" when none of expand and faults does.
func ownedBy(rel string) ledger.Stage {
	parts := strings.Split(rel, "/")
	if len(parts) != 4 {
		return ""
	}
	for _, st := range []ledger.Stage{ledger.Expand, ledger.Faults} {
		for _, f := range stageFolders[st] {
			if parts[2] == f.folder && f.name.MatchString(parts[3]) {
				return st
			}
		}
	}
	return ""
}

// removeTemps removes the temporary files of killed writes under the
// machine's output folder. Unsharded runs only: a shard's neighbours may be
// writing there.
func removeTemps(out string, m *machine.Machine, opt Options) error {
	if opt.Shard.N > 1 {
		return nil
	}
	_, err := machine.RemoveTemps(filepath.Join(out, m.ID))
	return err
}

// sweep moves to OUT/.stale the files in the stage's folders of a machine
// that no line of the machine's ledger, journals or parts names any more:
// outputs of a deleted recording, of a lowered variant count, of a clip the
// remainder policy now drops. It runs after the stage committed the
// machine's ledger, in unsharded runs only (a shard's part names only its
// own share). It returns the moved files' former paths, relative to out.
func sweep(out string, m *machine.Machine, stage ledger.Stage, opt Options) ([]string, error) {
	if opt.Shard.N > 1 {
		return nil, nil
	}
	dir := filepath.Join(out, m.ID)
	es, err := ledger.Load(dir)
	if err != nil {
		return nil, err
	}
	ref := map[string]bool{}
	for _, e := range es {
		if e.Path != "" {
			ref[e.Path] = true
		}
	}
	conds, err := os.ReadDir(dir)
	if errors.Is(err, fs.ErrNotExist) {
		return nil, nil
	}
	if err != nil {
		return nil, fmt.Errorf("augment: sweep: %w", err)
	}
	var moved []string
	for _, c := range conds {
		if !c.IsDir() || c.Name() == ledger.PartsDir || strings.HasPrefix(c.Name(), ".") {
			continue
		}
		for _, f := range stageFolders[stage] {
			files, err := os.ReadDir(filepath.Join(dir, c.Name(), f.folder))
			if errors.Is(err, fs.ErrNotExist) {
				continue
			}
			if err != nil {
				return moved, fmt.Errorf("augment: sweep: %w", err)
			}
			for _, x := range files {
				rel := path.Join(m.ID, c.Name(), f.folder, x.Name())
				if !x.Type().IsRegular() || !f.name.MatchString(x.Name()) || ref[rel] {
					continue
				}
				if _, err := machine.MoveStale(out, rel); err != nil {
					return moved, err
				}
				moved = append(moved, rel)
			}
		}
	}
	sort.Strings(moved)
	return moved, nil
}
