package features

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
)

// The names the features stage gives its files (see featurePath,
// writeStacks, pictures). The sweep moves only files with these names.
var (
	// features/<machine>/<condition>/<folder>/<audio stem>[.envelope|.maskNN].npy
	featureName = regexp.MustCompile(`^.+-c[0-9]{4}(-[a-z0-9-]+)?(\.envelope|\.mask[0-9]{2,})?\.npy$`)
	// features/<machine>/stack-<split>.npy
	stackName = regexp.MustCompile(`^stack-(train|eval|test)\.npy$`)
	// features/pictures/<machine>-spectrogram.png, <machine>-envelope-<kind>.png
	pictureName = regexp.MustCompile(`^(spectrogram|envelope-[a-z][a-z-]*)\.png$`)
)

// sweepFeatures runs after the stage committed its ledger sections and
// wrote index.csv: every file with a features name, in a plant machine's
// feature folder or among its pictures, that this run did not write or
// verify (keep) moves to OUT/.stale and is listed in its machine's summary.
// Then the temporary files of killed writes under OUT/features go.
func sweepFeatures(p *machine.Plant, out string, sums []StageSummary, keep map[string]bool) ([]StageSummary, error) {
	stale := map[string][]string{}
	move := func(id, rel string) error {
		if keep[rel] {
			return nil
		}
		if _, err := machine.MoveStale(out, rel); err != nil {
			return fmt.Errorf("features: %w", err)
		}
		stale[id] = append(stale[id], rel)
		return nil
	}
	for _, m := range p.Machines {
		root := filepath.Join(out, Dir, m.ID)
		err := filepath.WalkDir(root, func(fp string, d fs.DirEntry, err error) error {
			if err != nil {
				if fp == root && errors.Is(err, fs.ErrNotExist) {
					return fs.SkipDir
				}
				return err
			}
			if !d.Type().IsRegular() {
				return nil
			}
			r, _ := filepath.Rel(filepath.Join(out, Dir), fp)
			parts := strings.Split(filepath.ToSlash(r), "/")
			ok := (len(parts) == 4 && featureName.MatchString(parts[3])) || (len(parts) == 2 && stackName.MatchString(parts[1]))
			if !ok {
				return nil
			}
			return move(m.ID, path.Join(Dir, filepath.ToSlash(r)))
		})
		if err != nil {
			return nil, fmt.Errorf("features: sweep: %w", err)
		}
	}
	pics, err := os.ReadDir(filepath.Join(out, Dir, PicturesDir))
	if err != nil && !errors.Is(err, fs.ErrNotExist) {
		return nil, fmt.Errorf("features: sweep: %w", err)
	}
	for _, x := range pics {
		if !x.Type().IsRegular() {
			continue
		}
		// the longest machine id the name starts with owns it
		owner := ""
		for _, m := range p.Machines {
			rest, ok := strings.CutPrefix(x.Name(), m.ID+"-")
			if ok && pictureName.MatchString(rest) && len(m.ID) > len(owner) {
				owner = m.ID
			}
		}
		if owner != "" {
			if err := move(owner, path.Join(Dir, PicturesDir, x.Name())); err != nil {
				return nil, err
			}
		}
	}
	if _, err := machine.RemoveTemps(filepath.Join(out, Dir)); err != nil {
		return nil, fmt.Errorf("features: %w", err)
	}
	for i := range sums {
		sums[i].Stale = stale[sums[i].Machine]
		delete(stale, sums[i].Machine)
	}
	var rest []string
	for id := range stale {
		rest = append(rest, id)
	}
	sort.Strings(rest)
	for _, id := range rest {
		sums = append(sums, StageSummary{Machine: id, Stale: stale[id]})
	}
	for i := range sums {
		sort.Strings(sums[i].Stale)
	}
	return sums, nil
}
