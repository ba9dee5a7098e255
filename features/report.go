package features

import (
	"bytes"
	"encoding/base64"
	"fmt"
	"html/template"
	"image/png"
	"io"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"

	"thrum/machine"
)

// ReportData is what the run report shows; the CLI fills it.
type ReportData struct {
	Title string
	// Plant is the plant file the run used; Out the output folder, whose
	// features/pictures folder holds the PNG pictures the report embeds.
	Plant       string
	Out         string
	WallSeconds float64
	// Audit is the leakage audit's verdict: "clean", or "N violation(s)"
	// with the violations listed in Violations. The verdict shows green
	// only when Audit is "clean" and Violations is empty; an empty Audit
	// with no violations shows as "not run", and violations under an empty
	// or "clean" Audit show as "N violation(s)".
	Audit      string
	Violations []string
	// ViolationGroups, when set, show the violations grouped by rule and
	// machine pair (each group folded, with its count) instead of one flat
	// list.
	ViolationGroups []ViolationGroup
	// Warnings are the split stage's warnings (a split without real
	// anomalies, an empty split, an unused pin).
	Warnings []string
	// HoldOut names the hold-out conditions, "machine/condition".
	HoldOut []string
	// Skipped are the recordings the survey left out, with why.
	Skipped []string
	// Excluded are the outputs the split kept out of every list.
	Excluded []ExcludedFile
	// Conditions count the listed files per machine, condition and split.
	Conditions []ConditionCounts
	// Machines are shown in the order given.
	Machines []MachineReport
	// Evaluation, when set, is the evaluate stage's section: how well
	// baseline detectors trained with and without the variants tell the
	// real anomalies apart, with its ROC pictures.
	Evaluation *EvaluationSection
}

// EvaluationSection is the report's detector-evaluation section: notes on
// how to read it, tables of preformatted cells and PNG pictures.
type EvaluationSection struct {
	Notes  []string
	Tables []ReportTable
	// Pictures are PNG files relative to Out (slash-separated), embedded
	// in the order given.
	Pictures []string
}

// ReportTable is a table of text cells under a title; Note follows it.
type ReportTable struct {
	Title, Note string
	Header      []string
	Rows        [][]string
}

// ViolationGroup is the audit violations of one rule between one pair of
// machines.
type ViolationGroup struct {
	Rule, Machines string
	Lines          []string
}

// ExcludedFile is an output kept out of every list, and the reason.
type ExcludedFile struct {
	Path, Reason string
}

// ConditionCounts are one machine condition's file counts per split.
type ConditionCounts struct {
	Machine, Condition string
	HoldOut            bool
	// Splits maps train, eval, test to the counts of that split.
	Splits map[string]OriginCounts
}

// OriginCounts count files by origin: recorded (normal and real
// anomalous), augmented variants, synthetic fault cues.
type OriginCounts struct {
	Recorded, Anomalous, Augmented, Faults int
}

// MachineReport is one machine's counts.
type MachineReport struct {
	ID string
	// Clips is the number of clips cut from the recordings; Recorded and
	// Augmented count the normal outputs by origin.
	Clips, Recorded, Augmented int
	// Rejected counts variants not written, by reason; Faults counts the
	// synthetic fault cues, by kind.
	Rejected, Faults map[string]int
	// Splits counts files per split: train, eval, test, excluded.
	Splits map[string]int
	// Excluded lists the source recordings not used, each as
	// "<path>: <reason>" (the ledger's excluded lines), in ledger order.
	Excluded []string
}

// splitOrder is the display order of the usual split names; any other
// names follow in lexical order.
var splitOrder = []string{"train", "eval", "test", "excluded"}

// WriteReport writes the run report as one self-contained HTML file at
// path (inline CSS, pictures embedded as data: URIs, no scripts and no
// external references), atomically. See RenderReport.
func WriteReport(path string, d ReportData) error {
	var buf bytes.Buffer
	if err := RenderReport(&buf, d); err != nil {
		return err
	}
	if err := machine.WriteFileAtomic(path, buf.Bytes()); err != nil {
		return err
	}
	return machine.RemoveTempsOf(path)
}

// RenderReport writes the report's HTML to w. For each machine it embeds
// every PNG file in Out/features/pictures whose name starts with the
// machine's id and "-", in name order; a file that matches several ids
// ("pump-" and "pump-2-") goes to the longest. A missing pictures folder
// means no pictures; a file there that is not a readable PNG is an error.
// All text is escaped by html/template. The output depends only on d and
// the picture files, so equal inputs give identical bytes.
func RenderReport(w io.Writer, d ReportData) error {
	pics, err := reportPictures(filepath.Join(d.Out, Dir, "pictures"), d.Machines)
	if err != nil {
		return err
	}
	v := reportView{
		Title: d.Title, Plant: d.Plant, Out: d.Out,
		Wall:       wallTime(d.WallSeconds),
		Audit:      d.Audit,
		Violations: d.Violations,
		Groups:     d.ViolationGroups,
		AuditClass: "unknown",
		Warnings:   d.Warnings,
		HoldOut:    d.HoldOut,
		Skipped:    d.Skipped,
	}
	reasons := map[string]int{}
	for _, e := range d.Excluded {
		reasons[e.Reason]++
	}
	v.ExcludedBy = sortedCounts(reasons, nil)
	v.Excluded = d.Excluded
	for _, c := range d.Conditions {
		for _, sp := range splitOrder[:3] {
			oc, ok := c.Splits[sp]
			if !ok {
				continue
			}
			v.Conditions = append(v.Conditions, conditionRow{Machine: c.Machine, Condition: c.Condition, HoldOut: c.HoldOut, Split: sp, OriginCounts: oc})
		}
	}
	switch {
	case len(d.Violations) > 0 || (d.Audit != "" && d.Audit != "clean"):
		v.AuditClass = "fail"
		if d.Audit == "" || d.Audit == "clean" {
			v.Audit = fmt.Sprintf("%d violation(s)", len(d.Violations))
		}
	case d.Audit == "clean":
		v.AuditClass = "clean"
	default:
		v.Audit = "not run"
	}
	if v.Title == "" {
		v.Title = "thrum run report"
	}
	for i, m := range d.Machines {
		mv := machineView{
			ID: m.ID, Clips: m.Clips, Recorded: m.Recorded, Augmented: m.Augmented,
			Sections: []section{
				{"Rejected", sortedCounts(m.Rejected, nil)},
				{"Fault cues", sortedCounts(m.Faults, nil)},
				{"Splits", sortedCounts(m.Splits, splitOrder)},
			},
			Pictures: pics[i],
			Excluded: m.Excluded,
		}
		v.Machines = append(v.Machines, mv)
	}
	if e := d.Evaluation; e != nil {
		ev := &evaluationView{Notes: e.Notes, Tables: e.Tables}
		for _, name := range e.Pictures {
			pic, err := readPicture(filepath.Join(d.Out, filepath.FromSlash(name)), name)
			if err != nil {
				return err
			}
			pic.Caption = "ROC curves of the baseline detectors trained on the recorded clips only and on the recorded clips with their variants."
			ev.Pictures = append(ev.Pictures, pic)
		}
		v.Evaluation = ev
	}
	var buf bytes.Buffer
	if err := reportTemplate.Execute(&buf, v); err != nil {
		return fmt.Errorf("features: report: %w", err)
	}
	_, err = w.Write(buf.Bytes())
	return err
}

type reportView struct {
	Title, Plant, Out, Wall string
	Audit, AuditClass       string
	Violations              []string
	Groups                  []ViolationGroup
	Warnings, HoldOut       []string
	Skipped                 []string
	Excluded                []ExcludedFile
	ExcludedBy              []count
	Conditions              []conditionRow
	Machines                []machineView
	Evaluation              *evaluationView
}

type evaluationView struct {
	Notes    []string
	Tables   []ReportTable
	Pictures []picture
}

type conditionRow struct {
	Machine, Condition, Split string
	HoldOut                   bool
	OriginCounts
}

type machineView struct {
	ID                         string
	Clips, Recorded, Augmented int
	Sections                   []section
	Pictures                   []picture
	Excluded                   []string
}

// section is a group of table rows under one heading.
type section struct {
	Name string
	Rows []count
}

type count struct {
	Name string
	N    int
}

type picture struct {
	Name          string
	Caption       string
	Src           template.URL
	Width, Height int
}

// sortedCounts lists m with the names in first in that order, then the
// rest in lexical order.
func sortedCounts(m map[string]int, first []string) []count {
	var out []count
	seen := map[string]bool{}
	for _, k := range first {
		if n, ok := m[k]; ok {
			out = append(out, count{k, n})
			seen[k] = true
		}
	}
	var rest []string
	for k := range m {
		if !seen[k] {
			rest = append(rest, k)
		}
	}
	sort.Strings(rest)
	for _, k := range rest {
		out = append(out, count{k, m[k]})
	}
	return out
}

// wallTime formats a duration in seconds for people.
func wallTime(s float64) string {
	switch {
	case s < 0 || math.IsNaN(s) || math.IsInf(s, 0):
		return "unknown"
	case s < 60:
		return strconv.FormatFloat(s, 'f', 1, 64) + " s"
	case s < 3600:
		m := int(s / 60)
		return fmt.Sprintf("%d min %.0f s", m, s-float64(60*m))
	default:
		h := int(s / 3600)
		return fmt.Sprintf("%d h %d min", h, int(s-float64(3600*h))/60)
	}
}

// reportPictures reads the PNG files in dir and assigns each to the machine
// with the longest id that prefixes its name followed by "-".
func reportPictures(dir string, ms []MachineReport) ([][]picture, error) {
	out := make([][]picture, len(ms))
	ents, err := os.ReadDir(dir)
	if os.IsNotExist(err) {
		return out, nil
	}
	if err != nil {
		return nil, fmt.Errorf("features: report: %w", err)
	}
	for _, e := range ents { // ReadDir returns names in order
		name := e.Name()
		if e.IsDir() || !strings.EqualFold(filepath.Ext(name), ".png") {
			continue
		}
		best := -1
		for i, m := range ms {
			if m.ID != "" && strings.HasPrefix(name, m.ID+"-") && (best < 0 || len(m.ID) > len(ms[best].ID)) {
				best = i
			}
		}
		if best < 0 {
			continue
		}
		pic, err := readPicture(filepath.Join(dir, name), name)
		if err != nil {
			return nil, err
		}
		pic.Caption = caption(strings.TrimSuffix(name[len(ms[best].ID)+1:], filepath.Ext(name)))
		out[best] = append(out[best], pic)
	}
	return out, nil
}

// readPicture reads a PNG file for embedding as a data: URI.
func readPicture(file, name string) (picture, error) {
	data, err := os.ReadFile(file)
	if err != nil {
		return picture{}, fmt.Errorf("features: report: %w", err)
	}
	cfg, err := png.DecodeConfig(bytes.NewReader(data))
	if err != nil {
		return picture{}, fmt.Errorf("features: report: picture %s: %w", name, err)
	}
	return picture{
		Name: name,
		// The bytes are our own base64, so the URL is safe to emit as is.
		Src:   template.URL("data:image/png;base64," + base64.StdEncoding.EncodeToString(data)),
		Width: cfg.Width, Height: cfg.Height,
	}, nil
}

// caption describes a picture from the part of its name after the
// machine id, as the features stage names them.
func caption(rest string) string {
	switch {
	case rest == "spectrogram":
		return "Log-mel spectrogram of a recorded training clip, next to one of its augmented variants."
	case strings.HasPrefix(rest, "envelope-"):
		return "Envelope spectrum of a synthetic " + strings.TrimPrefix(rest, "envelope-") +
			" fault cue, with its defect frequencies marked."
	default:
		return rest
	}
}

var reportTemplate = template.Must(template.New("report").Parse(`<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>{{.Title}}</title>
<style>
body { font-family: system-ui, -apple-system, "Segoe UI", Helvetica, Arial, sans-serif; color: #1d232a; background: #ffffff; margin: 0; padding: 24px 32px; line-height: 1.45; }
header { border-bottom: 2px solid #d5dbe1; padding-bottom: 12px; margin-bottom: 20px; }
h1 { font-size: 1.6em; margin: 0 0 8px 0; }
h2 { font-size: 1.25em; margin: 28px 0 8px 0; border-bottom: 1px solid #d5dbe1; padding-bottom: 4px; }
dl.meta { display: grid; grid-template-columns: max-content auto; gap: 2px 16px; margin: 0; }
dl.meta dt { font-weight: 600; color: #4a5560; }
dl.meta dd { margin: 0; font-family: ui-monospace, Menlo, Consolas, monospace; overflow-wrap: anywhere; }
.audit { display: inline-block; padding: 2px 10px; border-radius: 4px; font-weight: 700; font-family: system-ui, sans-serif; }
.audit.clean { background: #1e8e3e; color: #ffffff; }
.audit.fail { background: #c5221f; color: #ffffff; }
.audit.unknown { background: #80868b; color: #ffffff; }
ul.violations, div.violations { color: #a50e0e; margin: 8px 0 0 0; }
div.violations summary { cursor: pointer; }
section.warnings { border-left: 4px solid #e37400; padding-left: 12px; }
table { border-collapse: collapse; margin: 8px 0 16px 0; min-width: 360px; }
th, td { border: 1px solid #d5dbe1; padding: 4px 10px; text-align: left; vertical-align: top; }
thead th { background: #eef1f4; }
tbody th { font-weight: 600; background: #f7f8fa; }
td.n { text-align: right; font-variant-numeric: tabular-nums; }
td.none { color: #80868b; font-style: italic; }
figure { margin: 12px 0 20px 0; }
figure img { max-width: 100%; height: auto; border: 1px solid #d5dbe1; }
figcaption { color: #4a5560; font-size: 0.92em; }
p.note { color: #4a5560; font-size: 0.92em; }
.safety { border-left: 4px solid #e37400; background: #fef7e0; padding: 10px 14px; margin-top: 32px; }
.safety h2 { margin-top: 4px; border: none; }
</style>
</head>
<body>
<header>
<h1>{{.Title}}</h1>
<dl class="meta">
<dt>Plant</dt><dd>{{.Plant}}</dd>
<dt>Output folder</dt><dd>{{.Out}}</dd>
<dt>Wall time</dt><dd>{{.Wall}}</dd>
<dt>Leakage audit</dt><dd><span class="audit {{.AuditClass}}">{{.Audit}}</span></dd>
</dl>
{{- if .Groups}}
<div class="violations">
{{- range .Groups}}
<details><summary><code>{{.Rule}}</code>{{if .Machines}} — {{.Machines}}{{end}}: {{len .Lines}} violation(s)</summary>
<ul>
{{- range .Lines}}
<li>{{.}}</li>
{{- end}}
</ul></details>
{{- end}}
</div>
{{- else if .Violations}}
<ul class="violations">
{{- range .Violations}}
<li>{{.}}</li>
{{- end}}
</ul>
{{- end}}
</header>
<main>
{{- if .Warnings}}
<section class="warnings">
<h2>Split warnings</h2>
<ul>
{{- range .Warnings}}
<li>{{.}}</li>
{{- end}}
</ul>
</section>
{{- end}}
{{- if .Conditions}}
<section>
<h2>Files per condition and split</h2>
<p>Hold-out conditions (kept out of training, all in test):
{{- if .HoldOut}}{{range $i, $h := .HoldOut}}{{if $i}},{{end}} <code>{{$h}}</code>{{end}}{{else}} none{{end}}.</p>
<table>
<thead><tr><th scope="col">Machine</th><th scope="col">Condition</th><th scope="col">Split</th><th scope="col">Recorded normal</th><th scope="col">Recorded anomalous</th><th scope="col">Augmented</th><th scope="col">Fault cues</th></tr></thead>
<tbody>
{{- range .Conditions}}
<tr><td>{{.Machine}}</td><td>{{.Condition}}{{if .HoldOut}} (hold-out){{end}}</td><td>{{.Split}}</td><td class="n">{{.Recorded}}</td><td class="n">{{.Anomalous}}</td><td class="n">{{.Augmented}}</td><td class="n">{{.Faults}}</td></tr>
{{- end}}
</tbody>
</table>
</section>
{{- end}}
{{- with .Evaluation}}
<section class="evaluation">
<h2>Detector evaluation</h2>
{{- range .Notes}}
<p>{{.}}</p>
{{- end}}
{{- range .Tables}}
<h3>{{.Title}}</h3>
<table>
<thead><tr>{{range .Header}}<th scope="col">{{.}}</th>{{end}}</tr></thead>
<tbody>
{{- range .Rows}}
<tr>{{range .}}<td>{{.}}</td>{{end}}</tr>
{{- end}}
</tbody>
</table>
{{- if .Note}}
<p class="note">{{.Note}}</p>
{{- end}}
{{- end}}
{{- range .Pictures}}
<figure>
<img src="{{.Src}}" width="{{.Width}}" height="{{.Height}}" alt="{{.Caption}}">
<figcaption>{{.Caption}} <code>{{.Name}}</code></figcaption>
</figure>
{{- end}}
</section>
{{- end}}
{{- if or .Skipped .Excluded}}
<section>
<h2>Skipped and excluded files</h2>
{{- if .Skipped}}
<details><summary>{{len .Skipped}} recording(s) or folder(s) the survey left out</summary>
<ul>
{{- range .Skipped}}
<li>{{.}}</li>
{{- end}}
</ul></details>
{{- end}}
{{- if .Excluded}}
<p>Outputs kept out of every list, by reason:{{range $i, $c := .ExcludedBy}}{{if $i}};{{end}} {{$c.Name}} {{$c.N}}{{end}}.</p>
<details><summary>{{len .Excluded}} excluded file(s)</summary>
<ul>
{{- range .Excluded}}
<li><code>{{.Path}}</code>: {{.Reason}}</li>
{{- end}}
</ul></details>
{{- end}}
</section>
{{- end}}
{{- range .Machines}}
<section class="machine">
<h2>Machine {{.ID}}</h2>
<table>
<thead><tr><th scope="col">Quantity</th><th scope="col">Name</th><th scope="col">Count</th></tr></thead>
<tbody>
<tr><th scope="row">Clips</th><td>cut from recordings</td><td class="n">{{.Clips}}</td></tr>
<tr><th scope="row" rowspan="2">Variants</th><td>recorded</td><td class="n">{{.Recorded}}</td></tr>
<tr><td>augmented</td><td class="n">{{.Augmented}}</td></tr>
{{- range .Sections}}
{{- $s := .}}
{{- range $i, $c := .Rows}}
<tr>{{if eq $i 0}}<th scope="row" rowspan="{{len $s.Rows}}">{{$s.Name}}</th>{{end}}<td>{{$c.Name}}</td><td class="n">{{$c.N}}</td></tr>
{{- else}}
<tr><th scope="row">{{$s.Name}}</th><td class="none">none</td><td class="n">0</td></tr>
{{- end}}
{{- end}}
</tbody>
</table>
{{- if .Excluded}}
<h3>Excluded recordings</h3>
<ul class="excluded">
{{- range .Excluded}}
<li>{{.}}</li>
{{- end}}
</ul>
{{- end}}
{{- range .Pictures}}
<figure>
<img src="{{.Src}}" width="{{.Width}}" height="{{.Height}}" alt="{{.Caption}}">
<figcaption>{{.Caption}} <code>{{.Name}}</code></figcaption>
</figure>
{{- end}}
</section>
{{- end}}
</main>
<section class="safety">
<h2>Safety</h2>
<p>Recording next to running machinery is noisy and can be dangerous. Wear hearing protection wherever the level
reaches 85 dB(A) or more averaged over a working shift, and keep microphones, cables, hands and loose clothing well
clear of shafts, couplings, belts and fans. Before mounting, moving or repairing a sensor on a machine, have it stopped
and locked out (isolated and tagged) so it cannot start while you work. The plant's own safety rules and the local
regulations come first and override anything in this report.</p>
</section>
</body>
</html>
`))
