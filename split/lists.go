package split

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"

	"thrum/machine"
)

// File names under OUT/splits/.
const (
	ListsFile       = "lists.csv"
	SummaryFile     = "summary.csv"
	BackgroundsFile = "backgrounds.csv"
	PlanFile        = "plan.json"
	SplitsDir       = "splits"
)

// listHeader is the column order of lists.csv.
var listHeader = []string{"path", "machine", "condition", "split", "origin", "label", "group",
	"sha256", "source", "source_sha256", "speed", "backgrounds", "reason"}

// WriteListsCSV writes rows as lists.csv. Backgrounds are joined by ";".
func WriteListsCSV(w io.Writer, rows []Row) error {
	cw := csv.NewWriter(w)
	if err := cw.Write(listHeader); err != nil {
		return err
	}
	for _, r := range rows {
		rec := []string{r.Path, r.Machine, r.Condition, string(r.Split), string(r.Origin), string(r.Label), r.Group,
			r.SHA256, r.Source, r.SourceSHA256, strconv.FormatFloat(r.Speed, 'g', -1, 64),
			strings.Join(r.Backgrounds, ";"), r.Reason}
		if err := cw.Write(rec); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

// ReadListsCSV reads lists.csv. Columns are found by header name, so extra
// columns are ignored; path and split are required.
func ReadListsCSV(r io.Reader) ([]Row, error) {
	recs, col, err := readCSV(r, "path", "split")
	if err != nil {
		return nil, err
	}
	var rows []Row
	for i, rec := range recs {
		get := func(name string) string {
			if j, ok := col[name]; ok && j < len(rec) {
				return rec[j]
			}
			return ""
		}
		row := Row{Item: Item{Path: get("path"), Machine: get("machine"), Condition: get("condition"),
			Origin: machine.Origin(get("origin")), Label: machine.Label(get("label")), Group: get("group"), SHA256: get("sha256"),
			Source: get("source"), SourceSHA256: get("source_sha256")}, Split: machine.Split(get("split")), Reason: get("reason")}
		row.Speed = 1
		if s := get("speed"); s != "" {
			v, err := strconv.ParseFloat(s, 64)
			if err != nil {
				return nil, fmt.Errorf("split: lists line %d: speed: %w", i+2, err)
			}
			row.Speed = v
		}
		if b := get("backgrounds"); b != "" {
			row.Backgrounds = strings.Split(b, ";")
		}
		rows = append(rows, row)
	}
	return rows, nil
}

// Summary is one line of summary.csv: the files and groups of one machine,
// split, origin and label.
type Summary struct {
	Machine string
	Split   machine.Split
	Origin  machine.Origin
	Label   machine.Label
	Files   int
	Groups  int
}

// Summarize counts rows per machine, split, origin and label, sorted.
func Summarize(rows []Row) []Summary {
	type key struct {
		m string
		s machine.Split
		o machine.Origin
		l machine.Label
	}
	files := map[key]int{}
	groups := map[key]map[string]bool{}
	for _, r := range rows {
		k := key{r.Machine, r.Split, r.Origin, r.Label}
		files[k]++
		if groups[k] == nil {
			groups[k] = map[string]bool{}
		}
		groups[k][r.Group] = true
	}
	out := make([]Summary, 0, len(files))
	for k, n := range files {
		out = append(out, Summary{k.m, k.s, k.o, k.l, n, len(groups[k])})
	}
	sort.Slice(out, func(i, j int) bool {
		a, b := out[i], out[j]
		if a.Machine != b.Machine {
			return a.Machine < b.Machine
		}
		if a.Split != b.Split {
			return splitOrder(a.Split) < splitOrder(b.Split)
		}
		if a.Origin != b.Origin {
			return a.Origin < b.Origin
		}
		return a.Label < b.Label
	})
	return out
}

func splitOrder(s machine.Split) int {
	switch s {
	case machine.SplitTrain:
		return 0
	case machine.SplitEval:
		return 1
	case machine.SplitTest:
		return 2
	}
	return 3
}

// WriteSummaryCSV writes summary.csv.
func WriteSummaryCSV(w io.Writer, s []Summary) error {
	cw := csv.NewWriter(w)
	cw.Write([]string{"machine", "split", "origin", "label", "files", "groups"})
	for _, r := range s {
		cw.Write([]string{r.Machine, string(r.Split), string(r.Origin), string(r.Label), strconv.Itoa(r.Files), strconv.Itoa(r.Groups)})
	}
	cw.Flush()
	return cw.Error()
}

// ReadSummaryCSV reads summary.csv.
func ReadSummaryCSV(r io.Reader) ([]Summary, error) {
	recs, col, err := readCSV(r, "machine", "split", "origin", "label", "files", "groups")
	if err != nil {
		return nil, err
	}
	var out []Summary
	for i, rec := range recs {
		f, err1 := strconv.Atoi(rec[col["files"]])
		g, err2 := strconv.Atoi(rec[col["groups"]])
		if err1 != nil || err2 != nil {
			return nil, fmt.Errorf("split: summary line %d: bad count", i+2)
		}
		out = append(out, Summary{rec[col["machine"]], machine.Split(rec[col["split"]]), machine.Origin(rec[col["origin"]]), machine.Label(rec[col["label"]]), f, g})
	}
	return out, nil
}

// WriteBackgroundsCSV writes the background partition (id, split), sorted by id.
func WriteBackgroundsCSV(w io.Writer, bg map[string]machine.Split) error {
	ids := make([]string, 0, len(bg))
	for id := range bg {
		ids = append(ids, id)
	}
	sort.Strings(ids)
	cw := csv.NewWriter(w)
	cw.Write([]string{"id", "split"})
	for _, id := range ids {
		cw.Write([]string{id, string(bg[id])})
	}
	cw.Flush()
	return cw.Error()
}

// ReadBackgroundsCSV reads the background partition.
func ReadBackgroundsCSV(r io.Reader) (map[string]machine.Split, error) {
	recs, col, err := readCSV(r, "id", "split")
	if err != nil {
		return nil, err
	}
	out := map[string]machine.Split{}
	for _, rec := range recs {
		out[rec[col["id"]]] = machine.Split(rec[col["split"]])
	}
	return out, nil
}

// Plan is plan.json: the policy and the background partition.
type Plan struct {
	Version     int                      `json:"version"`
	Policy      Policy                   `json:"policy"`
	Backgrounds map[string]machine.Split `json:"backgrounds"`
}

// WritePlan writes plan.json (indented, keys in a fixed order).
func WritePlan(w io.Writer, p Plan) error {
	b, err := json.MarshalIndent(p, "", "  ")
	if err != nil {
		return err
	}
	_, err = w.Write(append(b, '\n'))
	return err
}

// ReadPlan reads plan.json.
func ReadPlan(r io.Reader) (Plan, error) {
	var p Plan
	if err := json.NewDecoder(r).Decode(&p); err != nil {
		return p, fmt.Errorf("split: plan: %w", err)
	}
	return p, nil
}

// BackgroundIDs returns the sorted background ids of the policy and the rows.
func BackgroundIDs(rows []Row, p Policy) []string {
	set := map[string]bool{}
	for _, id := range p.Backgrounds {
		set[id] = true
	}
	for _, r := range rows {
		for _, id := range r.Backgrounds {
			set[id] = true
		}
	}
	ids := make([]string, 0, len(set))
	for id := range set {
		ids = append(ids, id)
	}
	sort.Strings(ids)
	return ids
}

// WriteSplits writes OUT/splits/{lists.csv, summary.csv, backgrounds.csv,
// plan.json}, each to a temporary file renamed into place. Temporary files
// of killed writes in OUT/splits are removed before and after; the caller
// holds the output root's lock.
func WriteSplits(out string, rows []Row, p Policy) error {
	dir := filepath.Join(out, SplitsDir)
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return fmt.Errorf("split: %w", err)
	}
	if _, err := machine.RemoveTemps(dir); err != nil {
		return err
	}
	bg := AssignBackgrounds(BackgroundIDs(rows, p), p)
	files := []struct {
		name string
		fn   func(io.Writer) error
	}{
		{ListsFile, func(w io.Writer) error { return WriteListsCSV(w, rows) }},
		{SummaryFile, func(w io.Writer) error { return WriteSummaryCSV(w, Summarize(rows)) }},
		{BackgroundsFile, func(w io.Writer) error { return WriteBackgroundsCSV(w, bg) }},
		{PlanFile, func(w io.Writer) error { return WritePlan(w, Plan{Version: 1, Policy: p, Backgrounds: bg}) }},
	}
	for _, f := range files {
		var buf bytes.Buffer
		if err := f.fn(&buf); err != nil {
			return fmt.Errorf("split: %s: %w", f.name, err)
		}
		if err := machine.WriteFileAtomic(filepath.Join(dir, f.name), buf.Bytes()); err != nil {
			return err
		}
	}
	_, err := machine.RemoveTemps(dir)
	return err
}

// ReadSplits reads OUT/splits/lists.csv and plan.json.
func ReadSplits(out string) ([]Row, Plan, error) {
	dir := filepath.Join(out, SplitsDir)
	f, err := os.Open(filepath.Join(dir, ListsFile))
	if err != nil {
		return nil, Plan{}, fmt.Errorf("split: %w", err)
	}
	rows, err := ReadListsCSV(f)
	f.Close()
	if err != nil {
		return nil, Plan{}, fmt.Errorf("split: %s: %w", ListsFile, err)
	}
	g, err := os.Open(filepath.Join(dir, PlanFile))
	if err != nil {
		return nil, Plan{}, fmt.Errorf("split: %w", err)
	}
	defer g.Close()
	plan, err := ReadPlan(g)
	return rows, plan, err
}

// readCSV reads all records and maps the header names to columns, checking
// that the required ones are present and every record is full length.
func readCSV(r io.Reader, required ...string) ([][]string, map[string]int, error) {
	cr := csv.NewReader(r)
	recs, err := cr.ReadAll()
	if err != nil {
		return nil, nil, fmt.Errorf("split: %w", err)
	}
	if len(recs) == 0 {
		return nil, nil, fmt.Errorf("split: empty csv (no header)")
	}
	col := map[string]int{}
	for i, h := range recs[0] {
		col[h] = i
	}
	for _, h := range required {
		if _, ok := col[h]; !ok {
			return nil, nil, fmt.Errorf("split: csv: missing column %q", h)
		}
	}
	// A carriage return inside a field cannot be carried faithfully by CSV
	// (readers fold "\r\n" to "\n"), so no value thrum writes holds one and a
	// field that does is refused rather than read back as something else.
	for i, rec := range recs {
		for j, v := range rec {
			if strings.ContainsRune(v, '\r') {
				return nil, nil, fmt.Errorf("split: csv record %d (header is 1), column %d: carriage return inside a field", i+1, j+1)
			}
		}
	}
	return recs[1:], col, nil
}
