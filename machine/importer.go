package machine

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"sort"
	"strings"

	"thrum/machine/wavio"
)

// DefaultLayout is the folder layout thrum reads without a manifest.
const DefaultLayout = "{machine}/{condition}/**"

// ImportOptions tune Import.
type ImportOptions struct {
	// Layout is the pattern recordings' paths follow below the root:
	// {machine}, {condition}, {session} and {label} match one name each,
	// * any text within a folder or file name, ** any number of folders
	// (default DefaultLayout).
	Layout string
	// Manifest, when set, lists the recordings instead (see ReadManifest);
	// Layout is then unused.
	Manifest string
}

// Import is a plant derived from an existing recordings tree.
type Import struct {
	// TOML is the plant file's text; it loads without edits, its physics
	// keys placeholders marked TODO.
	TOML string
	// Manifest is the CSV to write beside the plant (ManifestName) when the
	// tree is not in the folder layout thrum reads; nil otherwise.
	Manifest []byte
	// Recordings counts the audio files found; Skipped lists those the
	// layout did not match.
	Recordings int
	Skipped    []string
}

// ManifestName is the file name Import's manifest is written under.
const ManifestName = "manifest.csv"

// audioExt reports whether a file name has an audio extension thrum knows.
func audioExt(name string) bool {
	switch strings.ToLower(filepath.Ext(name)) {
	case ".wav", ".flac":
		return true
	}
	return false
}

// layoutRE compiles a layout pattern to a regular expression over
// slash-separated relative paths.
func layoutRE(layout string) (*regexp.Regexp, error) {
	var b strings.Builder
	b.WriteString("^")
	rest := layout
	seen := map[string]bool{}
	for rest != "" {
		switch {
		case strings.HasPrefix(rest, "/**"):
			b.WriteString("(?:/.*)?")
			rest = rest[3:]
		case strings.HasPrefix(rest, "**"):
			b.WriteString(".*")
			rest = rest[2:]
		case rest[0] == '*':
			b.WriteString("[^/]*")
			rest = rest[1:]
		case rest[0] == '{':
			end := strings.IndexByte(rest, '}')
			if end < 0 {
				return nil, fmt.Errorf("machine: layout %q: unclosed {", layout)
			}
			name := rest[1:end]
			switch name {
			case "machine", "condition", "session", "label":
			default:
				return nil, fmt.Errorf("machine: layout %q: {%s} is not one of {machine}, {condition}, {session}, {label}", layout, name)
			}
			if seen[name] {
				return nil, fmt.Errorf("machine: layout %q: {%s} appears twice", layout, name)
			}
			seen[name] = true
			b.WriteString("(?P<" + name + ">[^/]+?)")
			rest = rest[end+1:]
		default:
			b.WriteString(regexp.QuoteMeta(rest[:1]))
			rest = rest[1:]
		}
	}
	b.WriteString("$")
	if !seen["machine"] || !seen["condition"] {
		return nil, fmt.Errorf("machine: layout %q needs {machine} and {condition}", layout)
	}
	return regexp.Compile(b.String())
}

// sanitizeID turns a folder or file name part into a valid id.
func sanitizeID(s string) string {
	var b strings.Builder
	for _, r := range strings.ToLower(s) {
		switch {
		case r >= 'a' && r <= 'z', r >= '0' && r <= '9', r == '_', r == '-':
			b.WriteRune(r)
		case r == '.':
			b.WriteRune('-')
		default:
			b.WriteRune('-')
		}
	}
	id := strings.Trim(b.String(), "-_")
	if len(id) > 64 {
		id = id[:64]
	}
	if id == "" {
		id = "x"
	}
	return id
}

type importFile struct {
	row    ManifestRow
	rate   int
	frames int64
}

// ImportTree scans root for recordings and derives a plant from them: the
// machines, conditions and sessions its layout (or manifest) names, the
// most common sample rate, and placeholders that validate for the physics
// keys. plantDir is the folder the plant file will be written to, so the
// recordings root and manifest can be given relative to it. Sources are
// only read.
func ImportTree(root, plantDir string, opt ImportOptions) (*Import, error) {
	if st, err := os.Stat(root); err != nil || !st.IsDir() {
		return nil, fmt.Errorf("machine: import: %s is not a folder", root)
	}
	layout := opt.Layout
	if layout == "" {
		layout = DefaultLayout
	}
	imp := &Import{}
	var files []importFile
	needManifest := opt.Manifest != ""
	if opt.Manifest != "" {
		f, err := os.Open(opt.Manifest)
		if err != nil {
			return nil, fmt.Errorf("machine: import: %w", err)
		}
		rows, err := ReadManifest(f, opt.Manifest)
		f.Close()
		if err != nil {
			return nil, err
		}
		for _, r := range rows {
			if !ValidID(r.Machine) || !ValidID(r.Condition) {
				return nil, fmt.Errorf("machine: import: manifest %s:%d: machine %q and condition %q must be valid ids (lower-case letters, digits, '.', '_', '-')", opt.Manifest, r.Line, r.Machine, r.Condition)
			}
			files = append(files, importFile{row: r})
		}
	} else {
		re, err := layoutRE(layout)
		if err != nil {
			return nil, err
		}
		needManifest = layout != DefaultLayout
		err = filepath.WalkDir(root, func(p string, d fs.DirEntry, err error) error {
			if err != nil {
				return err
			}
			if d.IsDir() || !d.Type().IsRegular() || !audioExt(p) {
				return nil
			}
			rel, _ := filepath.Rel(root, p)
			rel = filepath.ToSlash(rel)
			m := re.FindStringSubmatch(rel)
			if m == nil {
				imp.Skipped = append(imp.Skipped, rel)
				return nil
			}
			row := ManifestRow{Path: rel, Label: LabelNormal}
			for i, name := range re.SubexpNames() {
				switch name {
				case "machine":
					row.Machine = m[i]
				case "condition":
					row.Condition = m[i]
				case "session":
					row.Session = m[i]
				case "label":
					if l := strings.ToLower(m[i]); l == "anomalous" || l == "abnormal" || l == "anomaly" {
						row.Label = LabelAnomalous
					}
				}
			}
			for _, part := range strings.Split(rel, "/") {
				if part == AnomalousDir {
					row.Label = LabelAnomalous
				}
				if strings.HasPrefix(part, SessionPrefix) && row.Session == "" {
					row.Session = strings.TrimPrefix(part, SessionPrefix)
				}
			}
			if !ValidID(row.Machine) || !ValidID(row.Condition) {
				needManifest = true
				row.Machine, row.Condition = sanitizeID(row.Machine), sanitizeID(row.Condition)
			}
			files = append(files, importFile{row: row})
			return nil
		})
		if err != nil {
			return nil, fmt.Errorf("machine: import: %w", err)
		}
	}
	if len(files) == 0 {
		return nil, fmt.Errorf("machine: import: no recordings under %s match the layout %q", root, layout)
	}
	rates := map[int]int{}
	shortest := math.Inf(1)
	for i := range files {
		f, err := wavio.Open(filepath.Join(root, filepath.FromSlash(files[i].row.Path)))
		if err != nil {
			continue // survey names it
		}
		files[i].rate, files[i].frames = f.Format().SampleRate, f.Frames()
		f.Close()
		rates[files[i].rate]++
		if files[i].rate > 0 {
			shortest = math.Min(shortest, float64(files[i].frames)/float64(files[i].rate))
		}
	}
	imp.Recordings = len(files)
	rate, n := 16000, 0
	for r, k := range rates {
		if k > n || k == n && r > rate {
			rate, n = r, k
		}
	}
	if rate < 8000 || rate > 192000 {
		rate = 16000
	}
	clip := DefaultClipSeconds
	if shortest < clip {
		clip = math.Max(0.5, math.Floor(2*shortest)/2)
	}

	type cond struct {
		name              string
		files, anom, sess int
	}
	machines := map[string][]*cond{}
	var order []string
	sessions := map[string]map[string]bool{}
	for _, f := range files {
		r := f.row
		cs, ok := machines[r.Machine]
		if !ok {
			order = append(order, r.Machine)
		}
		var c *cond
		for _, x := range cs {
			if x.name == r.Condition {
				c = x
			}
		}
		if c == nil {
			c = &cond{name: r.Condition}
			machines[r.Machine] = append(cs, c)
		}
		c.files++
		if r.Label == LabelAnomalous {
			c.anom++
		}
		if r.Session != "" {
			k := r.Machine + "/" + r.Condition
			if sessions[k] == nil {
				sessions[k] = map[string]bool{}
			}
			if !sessions[k][r.Session] {
				sessions[k][r.Session] = true
				c.sess++
			}
		}
	}
	sort.Strings(order)

	recRoot := root
	if rel, err := filepath.Rel(plantDir, root); err == nil {
		recRoot = rel
	}
	var b strings.Builder
	src := "layout \"" + layout + "\""
	if opt.Manifest != "" {
		src = "manifest " + opt.Manifest
	}
	fmt.Fprintf(&b, "# Plant written by thrum init --from %s (%s): %d recordings, %d machine(s).\n", root, src, len(files), len(order))
	b.WriteString("# It loads as it is; every TODO is a placeholder to replace with the plant's real values\n")
	b.WriteString("# before the outputs mean anything (the rpm drives speed bands, hold-outs and fault cues).\n\n")
	b.WriteString("seed = 1\n")
	fmt.Fprintf(&b, "sample_rate = %d  # the most common rate among the recordings (%d of %d files)\n", rate, n, len(files))
	fmt.Fprintf(&b, "recordings = %q\n", filepath.ToSlash(recRoot))
	if needManifest {
		man := opt.Manifest
		if man == "" {
			man = ManifestName
		} else if rel, err := filepath.Rel(plantDir, man); err == nil && !filepath.IsAbs(man) {
			man = rel
		}
		fmt.Fprintf(&b, "# the recordings are listed in a manifest (path, machine, condition, session, label)\nmanifest = %q\n", filepath.ToSlash(man))
	}
	fmt.Fprintf(&b, "clip_seconds = %g", clip)
	if clip < DefaultClipSeconds {
		fmt.Fprintf(&b, "  # the shortest recording is %.2f s", shortest)
	}
	b.WriteString("\n\n# [split] train = 0.7, eval = 0.15, test = 0.15 by default; each condition needs a recording\n")
	b.WriteString("# group (a recording, or a session) per split with a non-zero share.\n")
	b.WriteString("\n# TODO: a [[room]], [[zone]], [[background]] and a [[recipe]] to make variants; see thrum init DIR\n# for a commented example of each.\n")
	for _, id := range order {
		fmt.Fprintf(&b, "\n[[machine]]\nid = %q\n", id)
		fmt.Fprintf(&b, "kind = %q  # TODO: choose from %s\n", guessKind(id), strings.Join(MachineKinds(), ", "))
		b.WriteString("# blades = 0  # TODO: fan blades or pump vanes\n")
		b.WriteString("# [[machine.bearing]]  # TODO: balls, ball_diameter_mm, pitch_diameter_mm, contact_angle_deg\n")
		for _, c := range machines[id] {
			fmt.Fprintf(&b, "  [[machine.condition]]\n  name = %q  # %d recording(s)", c.name, c.files)
			if c.anom > 0 {
				fmt.Fprintf(&b, ", %d anomalous", c.anom)
			}
			if c.sess > 0 {
				fmt.Fprintf(&b, ", %d session(s)", c.sess)
			}
			b.WriteString("\n  rpm = 1500.0  # TODO: the shaft speed in this condition (placeholder)\n")
			b.WriteString("  band_percent = 2.0  # TODO: the speed drift seen in this condition, per cent\n")
		}
	}
	imp.TOML = b.String()
	if needManifest && opt.Manifest == "" {
		var mb bytes.Buffer
		w := csv.NewWriter(&mb)
		w.Write(ManifestColumns())
		sort.SliceStable(files, func(i, j int) bool { return files[i].row.Path < files[j].row.Path })
		for _, f := range files {
			w.Write([]string{f.row.Path, f.row.Machine, f.row.Condition, f.row.Session, string(f.row.Label)})
		}
		w.Flush()
		imp.Manifest = mb.Bytes()
	}
	return imp, nil
}

// guessKind picks a machine kind from an id that names one, else "motor".
func guessKind(id string) string {
	for _, k := range MachineKinds() {
		if strings.Contains(id, k) {
			return k
		}
	}
	return "motor"
}
