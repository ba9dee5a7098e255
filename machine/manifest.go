package machine

import (
	"context"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"os"
	"path"
	"path/filepath"
	"sort"
	"strings"
)

// ManifestRow is one recording of a manifest: a CSV file with the header
// path, machine, condition, session, label (session and label may be empty
// or absent) for recordings not laid out as <machine>/<condition>/ folders.
type ManifestRow struct {
	// Line is the row's line in the file (the header is line 1).
	Line int
	// Path is relative to the recordings root, slash-separated.
	Path      string
	Machine   string
	Condition string
	// Session groups recordings into one split unit ("" = none).
	Session string
	Label   Label
}

// ManifestColumns are the manifest's columns; path, machine and condition
// are required.
func ManifestColumns() []string {
	return []string{"path", "machine", "condition", "session", "label"}
}

// ReadManifest parses a manifest; name is used in errors. A bad row is an
// error naming the file and line: a path that is absolute or leaves the
// recordings root, a path listed twice, a label other than normal or
// anomalous ("" is normal).
func ReadManifest(r io.Reader, name string) ([]ManifestRow, error) {
	cr := csv.NewReader(r)
	cr.FieldsPerRecord = -1
	head, err := cr.Read()
	if err != nil {
		return nil, fmt.Errorf("machine: manifest %s: header: %w", name, err)
	}
	col := map[string]int{}
	for i, h := range head {
		col[strings.ToLower(strings.TrimSpace(h))] = i
	}
	for _, need := range []string{"path", "machine", "condition"} {
		if _, ok := col[need]; !ok {
			return nil, fmt.Errorf("machine: manifest %s:1: no %q column (columns: %s)", name, need, strings.Join(ManifestColumns(), ", "))
		}
	}
	get := func(rec []string, k string) string {
		if i, ok := col[k]; ok && i < len(rec) {
			return strings.TrimSpace(rec[i])
		}
		return ""
	}
	var out []ManifestRow
	seen := map[string]int{}
	for {
		rec, err := cr.Read()
		if errors.Is(err, io.EOF) {
			break
		}
		line, _ := cr.FieldPos(0)
		if err != nil {
			return nil, fmt.Errorf("machine: manifest %s: %w", name, err)
		}
		row := ManifestRow{Line: line, Path: get(rec, "path"), Machine: get(rec, "machine"), Condition: get(rec, "condition"), Session: get(rec, "session"), Label: LabelNormal}
		bad := func(format string, a ...any) error {
			return fmt.Errorf("machine: manifest %s:%d: %s", name, line, fmt.Sprintf(format, a...))
		}
		p := path.Clean(strings.ReplaceAll(row.Path, `\`, "/"))
		switch {
		case row.Path == "":
			return nil, bad("path is empty")
		case path.IsAbs(p) || p == ".." || strings.HasPrefix(p, "../"):
			return nil, bad("path %q must be relative to the recordings root and stay inside it", row.Path)
		case row.Machine == "" || row.Condition == "":
			return nil, bad("machine and condition are required")
		}
		if l, ok := seen[p]; ok {
			return nil, bad("path %q is listed again (first at line %d)", p, l)
		}
		seen[p] = line
		row.Path = p
		switch strings.ToLower(get(rec, "label")) {
		case "", "normal":
		case "anomalous", "abnormal", "anomaly":
			row.Label = LabelAnomalous
		default:
			return nil, bad("label %q is not normal or anomalous", get(rec, "label"))
		}
		out = append(out, row)
	}
	return out, nil
}

// scanManifest adds the recordings a plant's manifest lists, in the
// inventory's order (machine, condition as declared; paths sorted). A row
// naming a machine or condition the plant does not declare, or a file that
// does not exist, is a problem of kind "manifest".
func (inv *Inventory) scanManifest(ctx context.Context, p *Plant, want map[string]bool, levels bool) error {
	name := p.Resolve(p.Manifest)
	f, err := os.Open(name)
	if err != nil {
		return fmt.Errorf("machine: %s: manifest: %w", p.Path, err)
	}
	rows, err := ReadManifest(f, name)
	f.Close()
	if err != nil {
		return err
	}
	sort.SliceStable(rows, func(i, j int) bool { return rows[i].Path < rows[j].Path })
	root := p.RecordingsRoot()
	for _, row := range rows {
		m := p.Machine(row.Machine)
		switch {
		case m == nil:
			inv.Problems = append(inv.Problems, Problem{Path: row.Path, Kind: "manifest", Msg: fmt.Sprintf("%s:%d: machine %q is not in the plant file; not used", name, row.Line, row.Machine)})
		case m.Condition(row.Condition) == nil:
			inv.Problems = append(inv.Problems, Problem{Machine: m.ID, Path: row.Path, Kind: "manifest", Msg: fmt.Sprintf("%s:%d: condition %q is not a condition of machine %s; not used", name, row.Line, row.Condition, m.ID)})
		}
	}
	for i := range p.Machines {
		m := &p.Machines[i]
		if len(want) > 0 && !want[m.ID] {
			continue
		}
		seen := map[string]string{} // content hash → first recording, as Scan's folders
		for j := range m.Conditions {
			c := &m.Conditions[j]
			n := 0
			for k := range rows {
				row := &rows[k]
				if row.Machine != m.ID || row.Condition != c.Name {
					continue
				}
				n++
				if err := ctx.Err(); err != nil {
					return err
				}
				rec, err := inv.scanOne(ctx, p, m, c, root, filepath.Join(root, filepath.FromSlash(row.Path)), levels, row)
				if err != nil {
					return err
				}
				inv.markDuplicate(seen, m, c, rec)
				if rec != nil {
					inv.Recordings = append(inv.Recordings, rec)
				}
			}
			if n == 0 {
				inv.Problems = append(inv.Problems, Problem{Machine: m.ID, Condition: c.Name, Kind: "no-recordings", Msg: "condition has no recordings in the manifest " + p.Manifest})
			}
		}
	}
	return nil
}
