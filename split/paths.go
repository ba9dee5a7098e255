package split

import (
	"bufio"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"sort"
	"strings"
)

// ListPaths expands one argument of a list audit into audio paths:
//   - a folder gives every .wav file under it, recursively, sorted;
//   - a .wav file gives itself;
//   - any other file is a list: one path per line ('#' starts a comment), or
//     a CSV whose header has a "path" column; relative entries are taken
//     relative to the list's folder.
func ListPaths(arg string) ([]string, error) {
	st, err := os.Stat(arg)
	if err != nil {
		return nil, fmt.Errorf("split: %w", err)
	}
	if st.IsDir() {
		var out []string
		err := filepath.WalkDir(arg, func(p string, d fs.DirEntry, err error) error {
			if err != nil {
				return err
			}
			if !d.IsDir() && strings.EqualFold(filepath.Ext(p), ".wav") {
				out = append(out, p)
			}
			return nil
		})
		if err != nil {
			return nil, fmt.Errorf("split: %w", err)
		}
		sort.Strings(out)
		return out, nil
	}
	if strings.EqualFold(filepath.Ext(arg), ".wav") {
		return []string{arg}, nil
	}
	b, err := os.ReadFile(arg)
	if err != nil {
		return nil, fmt.Errorf("split: %w", err)
	}
	base := filepath.Dir(arg)
	abs := func(p string) string {
		p = filepath.FromSlash(p)
		if filepath.IsAbs(p) {
			return p
		}
		return filepath.Join(base, p)
	}
	text := string(b)
	first, _, _ := strings.Cut(text, "\n")
	if strings.Contains(first, ",") {
		recs, col, err := readCSV(strings.NewReader(text), "path")
		if err != nil {
			return nil, fmt.Errorf("split: %s: %w", arg, err)
		}
		out := make([]string, 0, len(recs))
		for _, r := range recs {
			out = append(out, abs(r[col["path"]]))
		}
		return out, nil
	}
	var out []string
	sc := bufio.NewScanner(strings.NewReader(text))
	for sc.Scan() {
		line := strings.TrimSpace(sc.Text())
		if line == "" || strings.HasPrefix(line, "#") {
			continue
		}
		out = append(out, abs(line))
	}
	return out, nil
}
